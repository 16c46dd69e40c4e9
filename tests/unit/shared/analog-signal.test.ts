import { describe, expect, it } from 'vitest'
import {
  classifyCurrent,
  currentFromShuntVoltage,
  currentFromValue,
  flowFromSqrtCurrent,
  isMeasurementCurrent,
  LOW_FLOW_CUTOFF_MAX_PERCENT,
  NE43_THRESHOLDS,
  shuntVoltage,
  sqrtCurrentFromFlow,
  valueFromCurrent,
  valueFromVoltage,
  voltageFromValue,
  type Ne43Class,
} from '../../../shared/domain/analog-signal.ts'
import { OutOfRangeError } from '../../../shared/domain/errors.ts'

// Source of the check values: tables of linear scaling and square-root extraction (values computed independently of this code from
// the standard 4–20 mA relations) and the NAMUR NE 43 signal bands.

describe('4–20 mA linear scaling', () => {
  // [mA, LRV, URV, PV, % span] — analog-signals.md "Linear scaling" table
  it.each([
    [12.0, 0, 10, 5.0, 50.0],
    [7.2, 0, 250, 50.0, 20.0],
    [4.0, -50, 150, -50.0, 0.0],
    [20.0, -50, 150, 150.0, 100.0],
    [3.8, -50, 150, -52.5, -1.25],
    [20.5, -50, 150, 156.25, 103.125],
    [8.0, 0, 100, 25.0, 25.0],
    [13.6, 0, 600, 360.0, 60.0],
  ])('%d mA over %d … %d is %d (%d %% of span)', (mA, low, high, pv, percent) => {
    expect(valueFromCurrent(mA, low, high)).toBeCloseTo(pv, 9)
    expect((100 * (valueFromCurrent(mA, low, high) - low)) / (high - low)).toBeCloseTo(percent, 9)
    expect(currentFromValue(pv, low, high)).toBeCloseTo(mA, 9)
  })

  // [PV, LRV, URV, mA] — analog-signals.md inverse table
  it.each([
    [75, 0, 100, 16.0],
    [350, 0, 400, 18.0],
    [-20, -50, 150, 6.4],
    [2.5, 0, 10, 8.0],
  ])('%d over %d … %d is %d mA', (pv, low, high, mA) => {
    expect(currentFromValue(pv, low, high)).toBeCloseTo(mA, 9)
  })

  it('refuses a reverse-entered range (LRV > URV), as the register does', () => {
    // The register keeps every range in rising order (bottom below top) and the signal math agrees with it, so a
    // range entered upside down is refused with a sentence rather than silently inverting the signal
    // (docs/domain/test-signals.md, "4–20 mA, square root, voltage").
    expect(() => currentFromValue(25, 100, 0)).toThrow(/rising order/)
    expect(() => valueFromCurrent(16, 100, 0)).toThrow(/rising order/)
    expect(() => flowFromSqrtCurrent(12, 100, 0)).toThrow(/rising order/)
  })

  it('refuses a range without span', () => {
    expect(() => currentFromValue(1, 5, 5)).toThrow(RangeError)
    expect(() => valueFromCurrent(12, 5, 5)).toThrow(RangeError)
  })
})

describe('square-root extraction (differential-pressure flow)', () => {
  // [mA, ΔP % span, flow % of max] — analog-signals.md "Square-root extraction" table
  it.each([
    [4.0, 0, 0],
    [4.16, 1.0, 10.0],
    [4.64, 4.0, 20.0],
    [5.0, 6.25, 25.0],
    [8.0, 25.0, 50.0],
    [12.0, 50.0, 70.711],
    [16.0, 75.0, 86.603],
    [20.0, 100.0, 100.0],
    [20.5, 103.125, 101.55],
  ])('%s mA (ΔP %s %%) is %s %% flow', (mA, dpPercent, flowPercent) => {
    expect(Math.abs(flowFromSqrtCurrent(mA, 0, 100) - flowPercent)).toBeLessThanOrEqual(0.0005)
    expect(valueFromCurrent(mA, 0, 100)).toBeCloseTo(dpPercent, 9)
    // inverse I = 4 + 16·(Q/Qmax)²; rounding the flow to 0.001 % moves I by up to 16·2·1.02·0.000005 ≈ 1.7e-4 mA
    expect(Math.abs(sqrtCurrentFromFlow(flowPercent, 0, 100) - mA)).toBeLessThanOrEqual(1.7e-4)
  })

  it('gives the range bottom at or below 4 mA and scales to the flow range', () => {
    expect(flowFromSqrtCurrent(3.9, 0, 250)).toBe(0)
    // 8 mA = 50 % flow (table above) of 0 … 250 m³/h
    expect(flowFromSqrtCurrent(8, 0, 250)).toBeCloseTo(125, 9)
  })

  it('applies a low-flow cut-off only when one is configured (site practice, no standard value)', () => {
    // 4.16 mA = 10 % flow (table above)
    expect(flowFromSqrtCurrent(4.16, 0, 100)).toBeCloseTo(10, 9)
    expect(flowFromSqrtCurrent(4.16, 0, 100, { lowFlowCutoffPercent: 12 })).toBe(0)
    expect(flowFromSqrtCurrent(4.64, 0, 100, { lowFlowCutoffPercent: 12 })).toBeCloseTo(20, 9)
  })

  it('cannot represent a flow below the range bottom', () => {
    expect(() => sqrtCurrentFromFlow(-1, 0, 100)).toThrow(OutOfRangeError)
  })
})

describe('voltage signals and the 250 Ω shunt', () => {
  // analog-signals.md: 1–5 V across 250 Ω (4 mA → 1.000 V, 12 mA → 3.000 V, 20 mA → 5.000 V) [ISA-50.00.01]
  it.each([
    [4, 1],
    [12, 3],
    [20, 5],
    [3.6, 0.9],
    [21, 5.25],
  ])('%d mA across 250 Ω is %d V', (mA, volts) => {
    expect(shuntVoltage(mA)).toBeCloseTo(volts, 12)
    expect(currentFromShuntVoltage(volts)).toBeCloseTo(mA, 12)
  })

  // common practice: voltage signals scale linearly like the current signal, live zero 1 V or dead zero 0 V
  it.each([
    [{ low: 1, high: 5 } as const, 5, 0, 10, 3],
    [{ low: 1, high: 5 } as const, 0, 0, 10, 1],
    [{ low: 0, high: 10 } as const, 2.5, 0, 10, 2.5],
    [{ low: 0, high: 10 } as const, 75, 0, 100, 7.5],
    [{ low: 0, high: 5 } as const, 100, 0, 400, 1.25],
    [{ low: 0, high: 5 } as const, -20, -50, 150, 0.75],
  ])('%o: %d over %d … %d is %d V', (signal, pv, low, high, volts) => {
    expect(voltageFromValue(pv, low, high, signal)).toBeCloseTo(volts, 12)
    expect(valueFromVoltage(volts, low, high, signal)).toBeCloseTo(pv, 9)
  })

  it('1–5 V agrees with 4–20 mA across 250 Ω', () => {
    // ISA-50.00.01 via analog-signals.md: the same signal seen as current or voltage
    for (const pv of [0, 13, 37.5, 80, 100]) {
      expect(voltageFromValue(pv, 0, 100, { low: 1, high: 5 })).toBeCloseTo(
        shuntVoltage(currentFromValue(pv, 0, 100)),
        12,
      )
    }
  })
})

describe('NAMUR NE 43 classification', () => {
  // analog-signals.md "NE 43 classification check values" (thresholds 3.6 / 3.8 / 20.5 / 21.0 mA, inclusive)
  it.each([
    [0.0, 'failure_low', false],
    [3.59, 'failure_low', false],
    [3.6, 'failure_low', false],
    [3.7, 'uncertain_low', false],
    [3.8, 'under_range', true],
    [3.95, 'under_range', true],
    [4.0, 'measuring', true],
    [20.0, 'measuring', true],
    [20.4, 'over_range', true],
    [20.5, 'over_range', true],
    [20.8, 'uncertain_high', false],
    [21.0, 'failure_high', false],
    [22.0, 'failure_high', false],
  ] as [number, Ne43Class, boolean][])('%d mA is %s', (mA, expected, valid) => {
    expect(classifyCurrent(mA)).toBe(expected)
    expect(isMeasurementCurrent(mA)).toBe(valid)
  })

  it('classifies computed currents at the band edges despite binary rounding', () => {
    // 3.8 mA = −1.25 % and 20.5 mA = 103.125 % of span (analog-signals.md)
    expect(classifyCurrent(currentFromValue(-52.5, -50, 150))).toBe('under_range')
    expect(classifyCurrent(currentFromValue(156.25, -50, 150))).toBe('over_range')
  })

  it('accepts per-loop thresholds (e.g. fail high at ≥ 21.6 mA, seen in device documentation)', () => {
    const thresholds = { ...NE43_THRESHOLDS, failureHigh: 21.6 }
    expect(classifyCurrent(21.2, thresholds)).toBe('uncertain_high')
    expect(classifyCurrent(21.6, thresholds)).toBe('failure_high')
  })
})

describe('bad numbers are refused, never passed on as NaN', () => {
  // A NaN reading or setpoint must not come back as a NaN signal (common practice: refuse invalid input).
  it.each([
    ['currentFromValue', () => currentFromValue(Number.NaN, 0, 100)],
    ['valueFromCurrent', () => valueFromCurrent(Number.NaN, 0, 100)],
    ['flowFromSqrtCurrent', () => flowFromSqrtCurrent(Number.NaN, 0, 100)],
    ['valueFromVoltage', () => valueFromVoltage(Number.NaN, 0, 100, { low: 1, high: 5 })],
    ['currentFromValue (∞)', () => currentFromValue(Number.POSITIVE_INFINITY, 0, 100)],
  ])('%s refuses NaN', (_name, call) => {
    expect(call).toThrow(RangeError)
  })
})

describe('low-flow cut-off bounds', () => {
  // analog-signals.md: typical cut-offs are 1 % of ΔP span ≈ 10 % of flow, or 0.5–6 % of flow (common practice).
  // The product accepts 0 … 20 % of flow span; 150 % would read every flow as zero.
  it.each([150, 100, 20.5, -1, Number.NaN])('refuses a cut-off of %s %%', (cutoff) => {
    expect(() => flowFromSqrtCurrent(12, 0, 100, { lowFlowCutoffPercent: cutoff })).toThrow(/low-flow cut-off/)
  })

  it('accepts the bounds 0 and 20 %', () => {
    expect(LOW_FLOW_CUTOFF_MAX_PERCENT).toBe(20)
    // 12 mA = 70.711 % flow (table above): above either cut-off
    expect(flowFromSqrtCurrent(12, 0, 100, { lowFlowCutoffPercent: 0 })).toBeCloseTo(70.711, 3)
    expect(flowFromSqrtCurrent(12, 0, 100, { lowFlowCutoffPercent: 20 })).toBeCloseTo(70.711, 3)
    // 4.16 mA = 10 % flow: below a 20 % cut-off
    expect(flowFromSqrtCurrent(4.16, 0, 100, { lowFlowCutoffPercent: 20 })).toBe(0)
  })
})

describe('NE 43 per-loop thresholds must keep the order of the bands', () => {
  // NE 43 bands via analog-signals.md: failure ≤ 3.6 < uncertain < 3.8 ≤ measuring ≤ 20.5 < uncertain < 21.0 ≤ failure
  it.each([
    ['failure low above measure low', { failureLow: 3.9, measureLow: 3.8, measureHigh: 20.5, failureHigh: 21 }],
    ['failure high below measure high', { failureLow: 3.6, measureLow: 3.8, measureHigh: 20.5, failureHigh: 20 }],
    ['measure low above 4 mA', { failureLow: 3.6, measureLow: 4.2, measureHigh: 20.5, failureHigh: 21 }],
    ['measure high below 20 mA', { failureLow: 3.6, measureLow: 3.8, measureHigh: 19.5, failureHigh: 21 }],
    ['all inverted', { failureLow: 21, measureLow: 20.5, measureHigh: 3.8, failureHigh: 3.6 }],
    ['NaN', { failureLow: Number.NaN, measureLow: 3.8, measureHigh: 20.5, failureHigh: 21 }],
  ])('refuses %s', (_name, thresholds) => {
    expect(() => classifyCurrent(12, thresholds)).toThrow(/NE 43 thresholds/)
  })

  it('accepts thresholds that touch 4 and 20 mA', () => {
    expect(classifyCurrent(12, { failureLow: 3.6, measureLow: 4, measureHigh: 20, failureHigh: 21 })).toBe('measuring')
  })
})

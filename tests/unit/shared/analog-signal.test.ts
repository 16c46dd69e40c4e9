import { describe, expect, it } from 'vitest'
import {
  classifyCurrent,
  currentFromShuntVoltage,
  currentFromValue,
  flowFromSqrtCurrent,
  isMeasurementCurrent,
  NE43_THRESHOLDS,
  shuntVoltage,
  sqrtCurrentFromFlow,
  valueFromCurrent,
  valueFromVoltage,
  voltageFromValue,
  type Ne43Class,
} from '../../../shared/domain/analog-signal.ts'
import { OutOfRangeError } from '../../../shared/domain/errors.ts'

// Source of the check values: ../shared/reference/analog-signals.md (linear scaling, square-root extraction and
// NAMUR NE 43 tables; values computed there from the stated formulas).

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

  it('handles a reverse-acting range (LRV > URV) with the same formula', () => {
    // analog-signals.md: "Reverse-acting ranges simply have LRV > URV; the same formula applies."
    expect(currentFromValue(25, 100, 0)).toBeCloseTo(16, 9)
    expect(valueFromCurrent(16, 100, 0)).toBeCloseTo(25, 9)
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

import { describe, expect, it } from 'vitest'
import { MissingInputError, OutOfRangeError, UnitConversionError } from '../../../shared/domain/errors.ts'
import {
  computeTestSignal,
  engineeringFromSignal,
  type TestSignalInstrument,
  type TestSignalLimit,
} from '../../../shared/domain/test-signal.ts'

const tcK: TestSignalInstrument = {
  unit: '°C',
  rangeLow: 0,
  rangeHigh: 600,
  signal: { kind: 'thermocouple', tcType: 'K', headTransmitter: false },
}
const high = (setpoint: number, extra: Partial<TestSignalLimit> = {}): TestSignalLimit => ({
  direction: 'high',
  setpoint,
  deadband: 0,
  deadbandUnit: 'eu',
  tolerance: null,
  ...extra,
})

function alt(result: ReturnType<typeof computeTestSignal>, label: string, unit: string): number | undefined {
  return result.alternatives.find((a) => a.label === label && a.unit === unit)?.value
}

function caught(fn: () => unknown): unknown {
  try {
    fn()
  } catch (error) {
    return error
  }
  return undefined
}

describe('thermocouple, millivolt source', () => {
  it('injects E(setpoint) − E(cold junction): type K, 300 °C, cold junction 25 °C', () => {
    // thermocouples.md CJC check values: E_meas = 11.2083 mV, E(25 °C) = 1.0002 mV; K 300 °C = 12.2086 mV (NIST SRD 60)
    const r = computeTestSignal(tcK, high(300), { mode: 'mv_source', coldJunctionC: 25 })
    expect(r.unit).toBe('mV')
    expect(r.value).toBe(11.208)
    expect(r.engineering).toEqual({ value: 300, unit: '°C' })
    expect(r.components).toMatchObject({
      setpointC: 300,
      coldJunctionC: 25,
      emfSetpointMv: 12.2086,
      emfColdJunctionMv: 1.0002,
    })
    // NIST table value of K at 300 °C, 3 dp (thermocouples.md)
    expect(alt(r, 'Emf with the reference junction at 0 °C (table value)', 'mV')).toBe(12.209)
    expect(r.flags).toEqual([])
  })

  it.each([
    // thermocouples.md CJC table: [type, t_hot, t_cj, E_meas (4 dp)]
    ['K', 100, 20, 3.2981],
    ['J', 200, 22, 9.6565],
    ['T', -50, 20, -2.6086],
    ['N', 800, 30, 27.6615],
    ['E', 150, 25, 8.2937],
  ] as const)('type %s at %s °C with the cold junction at %s °C: %s mV', (tcType, tHot, tCj, eMeas) => {
    const instrument: TestSignalInstrument = {
      unit: '°C',
      rangeLow: -100,
      rangeHigh: 1000,
      signal: { kind: 'thermocouple', tcType, headTransmitter: false },
    }
    const r = computeTestSignal(instrument, high(tHot), { coldJunctionC: tCj })
    expect(Math.abs(r.value - eMeas)).toBeLessThanOrEqual(0.0005 + 1e-9)
  })

  it('defaults to the millivolt source and requires the cold junction', () => {
    const error = caught(() => computeTestSignal(tcK, high(300)))
    expect(error).toBeInstanceOf(MissingInputError)
    expect(error).toMatchObject({ field: 'coldJunctionC' })
    expect(() => computeTestSignal(tcK, high(300), { mode: 'mv_source', coldJunctionC: null })).toThrow(
      MissingInputError,
    )
  })

  it('converts a °F or K instrument to °C first', () => {
    // 572 °F = 300 °C and 573.15 K = 300 °C (arithmetic); then as above: 11.2083 mV (thermocouples.md)
    const inF = computeTestSignal({ ...tcK, unit: '°F', rangeLow: 32, rangeHigh: 1112 }, high(572), {
      coldJunctionC: 25,
    })
    expect(inF.value).toBe(11.208)
    expect(inF.components.setpointC).toBe(300)
    const inK = computeTestSignal({ ...tcK, unit: 'K', rangeLow: 273.15, rangeHigh: 873.15 }, high(573.15), {
      coldJunctionC: 25,
    })
    expect(inK.value).toBe(11.208)
  })

  it('lists setpoint ± tolerance and the reset point, in °C and mV', () => {
    // test-acceptance.md: TC K transmitter 0–600 °C, tolerance ±0.5 % span = ±3 °C
    const r = computeTestSignal(
      tcK,
      high(300, { tolerance: 0.5, toleranceUnit: 'percent_span', deadband: 1, deadbandUnit: 'percent_span' }),
      { coldJunctionC: 0 },
    )
    expect(alt(r, 'Setpoint + tolerance', '°C')).toBe(303)
    expect(alt(r, 'Setpoint − tolerance', '°C')).toBe(297)
    // high limit resets below setpoint − deadband; 1 % of a 600 °C span = 6 °C (DOMAIN §5)
    expect(alt(r, 'Expected reset point', '°C')).toBe(294)
    // with the cold junction at 0 °C the source value is the table emf: K 300 °C = 12.209 mV (NIST SRD 60)
    expect(r.value).toBe(12.209)
    const plus = alt(r, 'Setpoint + tolerance', 'mV')!
    const minus = alt(r, 'Setpoint − tolerance', 'mV')!
    // about 3 °C × 42 µV/°C either side (K sensitivity near 300 °C, computed from the NIST function)
    expect(plus - r.value).toBeGreaterThan(0.12)
    expect(plus - r.value).toBeLessThan(0.13)
    expect(r.value - minus).toBeGreaterThan(0.12)
    expect(r.value - minus).toBeLessThan(0.13)
  })

  it('throws OutOfRangeError for a setpoint outside the reference function', () => {
    // type K is defined from −270 to 1372 °C (thermocouples.md)
    const error = caught(() => computeTestSignal({ ...tcK, rangeHigh: 1500 }, high(1400), { coldJunctionC: 25 }))
    expect(error).toBeInstanceOf(OutOfRangeError)
    expect(error).toMatchObject({ min: -270, max: 1372 })
  })

  it('flags a tolerance point outside the reference function instead of failing', () => {
    const r = computeTestSignal({ ...tcK, rangeHigh: 1372 }, high(1370, { tolerance: 5, toleranceUnit: 'eu' }), {
      coldJunctionC: 25,
    })
    expect(r.flags).toContain('alternative_out_of_range')
    expect(alt(r, 'Setpoint + tolerance', 'mV')).toBeUndefined()
    expect(alt(r, 'Setpoint − tolerance', 'mV')).toBeDefined()
  })

  it('adds the head transmitter output (linear over the instrument range)', () => {
    // analog-signals.md: I = 4 + 16·(PV − LRV)/(URV − LRV); 300 °C on 0–600 °C = 50 % = 12 mA
    const r = computeTestSignal(
      { ...tcK, signal: { kind: 'thermocouple', tcType: 'K', headTransmitter: true } },
      high(300),
      { coldJunctionC: 25 },
    )
    expect(alt(r, 'Head transmitter output (linear over the instrument range)', 'mA')).toBe(12)
  })

  it('flags a type B setpoint below 250 °C (the emf there is too small to test)', () => {
    const typeB: TestSignalInstrument = {
      unit: '°C',
      rangeLow: 0,
      rangeHigh: 1800,
      signal: { kind: 'thermocouple', tcType: 'B', headTransmitter: false },
    }
    expect(computeTestSignal(typeB, high(200), { coldJunctionC: 25 }).flags).toContain('type_b_low_end')
    // B at 1000 °C = 4.834 mV (NIST SRD 60); E_B(0 °C) = 0
    const r = computeTestSignal(typeB, high(1000), { coldJunctionC: 0 })
    expect(r.value).toBe(4.834)
    expect(r.flags).toEqual([])
  })

  it('refuses a thermocouple instrument without a temperature unit', () => {
    expect(() => computeTestSignal({ ...tcK, unit: 'bar' }, high(3), { coldJunctionC: 25 })).toThrow(
      UnitConversionError,
    )
  })
})

describe('thermocouple, simulation mode', () => {
  it('gives the temperature itself in engineering units, no cold junction needed', () => {
    const r = computeTestSignal(tcK, high(300, { tolerance: 3, toleranceUnit: 'eu' }), { mode: 'tc_simulate' })
    expect(r.unit).toBe('eu')
    expect(r.value).toBe(300)
    expect(alt(r, 'Setpoint + tolerance', '°C')).toBe(303)
    // K at 300 °C = 12.209 mV (NIST SRD 60 via thermocouples.md)
    expect(alt(r, 'Emf with the reference junction at 0 °C (table value)', 'mV')).toBe(12.209)
  })

  it('still refuses a setpoint outside the reference function', () => {
    expect(() => computeTestSignal(tcK, high(1400), { mode: 'tc_simulate' })).toThrow(OutOfRangeError)
  })
})

describe('RTD', () => {
  const pt100: TestSignalInstrument = {
    unit: '°C',
    rangeLow: 0,
    rangeHigh: 200,
    signal: { kind: 'rtd', element: 'Pt100', wires: 3, headTransmitter: false },
  }

  it.each([
    // rtd.md IEC 60751 table: Pt100 100 °C = 138.5055 Ω, −100 °C = 60.2558 Ω; Pt1000 200 °C = 1758.560 Ω, 850 °C = 3904.811 Ω
    ['Pt100', 100, 138.51],
    ['Pt100', -100, 60.26],
    ['Pt1000', 200, 1758.56],
    ['Pt1000', 850, 3904.81],
  ] as const)('%s at %s °C is %s Ω', (element, t, ohm) => {
    const r = computeTestSignal(
      { ...pt100, rangeLow: -200, rangeHigh: 850, signal: { kind: 'rtd', element, wires: 4, headTransmitter: false } },
      high(t),
    )
    expect(r.unit).toBe('ohm')
    expect(r.value).toBe(ohm)
  })

  it('adds the head transmitter mA and a lead-resistance note for 2 wires', () => {
    // 150 °C on 0–200 °C = 75 % = 16 mA (analog-signals.md formula)
    const r = computeTestSignal(
      { ...pt100, signal: { kind: 'rtd', element: 'Pt100', wires: 2, headTransmitter: true } },
      high(150),
    )
    // Pt100 150 °C = 157.3251 Ω (rtd.md)
    expect(r.value).toBe(157.33)
    expect(alt(r, 'Head transmitter output (linear over the instrument range)', 'mA')).toBe(16)
    expect(r.notes.some((n) => n.includes('2-wire'))).toBe(true)
  })

  it('throws OutOfRangeError outside −200 … 850 °C', () => {
    expect(() => computeTestSignal({ ...pt100, rangeHigh: 1000 }, high(900))).toThrow(OutOfRangeError)
  })
})

describe('current signal', () => {
  const pressure: TestSignalInstrument = {
    unit: 'bar',
    rangeLow: 0,
    rangeHigh: 10,
    signal: { kind: 'current', sqrtExtraction: false },
  }

  it('scales linearly and gives the voltage across 250 Ω', () => {
    // analog-signals.md: 12.0 mA ↔ 5.000 bar on 0 … 10 bar; 12 mA → 3.000 V across 250 Ω
    const r = computeTestSignal(pressure, high(5))
    expect(r.unit).toBe('mA')
    expect(r.value).toBe(12)
    expect(alt(r, 'Voltage across 250 Ω', 'V')).toBe(3)
    expect(r.flags).toEqual([])
  })

  it.each([
    // analog-signals.md inverse table
    [-20, -50, 150, 6.4],
    [75, 0, 100, 16],
    [350, 0, 400, 18],
    [2.5, 0, 10, 8],
  ])('%s on %s … %s is %s mA', (sp, low, highEnd, mA) => {
    expect(computeTestSignal({ ...pressure, rangeLow: low, rangeHigh: highEnd }, high(sp)).value).toBe(mA)
  })

  it('uses I = 4 + 16·(Q/Qmax)² with square-root extraction', () => {
    // analog-signals.md: 50 % flow = 8.00 mA; 70.711 % flow = 12.00 mA
    const flow: TestSignalInstrument = {
      unit: 'm³/h',
      rangeLow: 0,
      rangeHigh: 200,
      signal: { kind: 'current', sqrtExtraction: true },
    }
    expect(computeTestSignal(flow, high(100)).value).toBe(8)
    expect(computeTestSignal(flow, high(141.422)).value).toBe(12)
    // a flow below the bottom of the range has no ΔP signal
    expect(() => computeTestSignal(flow, { ...high(-5), direction: 'low' })).toThrow(OutOfRangeError)
  })

  it('computes the reset point and tolerance points in mA', () => {
    // test-acceptance.md: high trip SP 80.0 bar, tolerance ±0.5 bar; reset 78.0 bar (deadband 2 bar)
    const r = computeTestSignal(
      { ...pressure, rangeHigh: 100 },
      high(80, { deadband: 2, tolerance: 0.5, toleranceUnit: 'eu' }),
    )
    expect(r.value).toBe(16.8)
    expect(alt(r, 'Setpoint + tolerance', 'bar')).toBe(80.5)
    expect(alt(r, 'Setpoint − tolerance', 'bar')).toBe(79.5)
    expect(alt(r, 'Expected reset point', 'bar')).toBe(78)
    // I = 4 + 16·PV/100 (analog-signals.md)
    expect(alt(r, 'Setpoint + tolerance', 'mA')).toBe(16.88)
    expect(alt(r, 'Setpoint − tolerance', 'mA')).toBe(16.72)
    expect(alt(r, 'Expected reset point', 'mA')).toBe(16.48)
  })

  it('puts the reset point of a low limit above the setpoint (percent of span)', () => {
    // test-acceptance.md: low trip SP 20.0 % on 0–100 %; DOMAIN §5: returns when PV > setpoint + deadband
    const level: TestSignalInstrument = {
      unit: '%',
      rangeLow: 0,
      rangeHigh: 100,
      signal: { kind: 'current', sqrtExtraction: false },
    }
    const r = computeTestSignal(level, {
      direction: 'low',
      setpoint: 20,
      deadband: 1,
      deadbandUnit: 'percent_span',
      tolerance: 1,
      toleranceUnit: 'percent_span',
    })
    expect(alt(r, 'Expected reset point', '%')).toBe(21)
    expect(alt(r, 'Setpoint − tolerance', '%')).toBe(19)
    // 20 % = 7.2 mA (analog-signals.md: 7.2 mA = 20 % span)
    expect(r.value).toBe(7.2)
  })

  it.each([
    // analog-signals.md on −50 … 150 °C: 156.25 → 20.5 mA (still measurement), 160 → 20.8 mA (outside both bands),
    // −52.5 → 3.8 mA (measurement), −55 → 3.6 mA (failure low), 165 → 21.2 mA (failure high)
    [156.25, 20.5, []],
    [160, 20.8, ['ne43_uncertain_high']],
    [-52.5, 3.8, []],
    [-54, 3.68, ['ne43_uncertain_low']],
    [-55, 3.6, ['ne43_failure_low']],
    [165, 21.2, ['ne43_failure_high']],
  ] as [number, number, string[]][])('setpoint %s on −50 … 150 °C is %s mA with NE 43 flags %j', (sp, mA, ne43) => {
    const r = computeTestSignal(
      { unit: '°C', rangeLow: -50, rangeHigh: 150, signal: { kind: 'current', sqrtExtraction: false } },
      high(sp),
    )
    expect(r.value).toBe(mA)
    expect(r.flags).toEqual(['setpoint_outside_range', ...ne43])
  })
})

describe('voltage signal', () => {
  it.each([
    // 1–5 V: 12 mA ↔ 3 V across 250 Ω (analog-signals.md); 0–10 V and 0–5 V: linear, common practice
    [1, 5, 5, 3],
    [0, 10, 2.5, 2.5],
    [0, 5, 7.5, 3.75],
  ] as const)('%s–%s V: %s bar on 0 … 10 bar is %s V', (low, highV, sp, volts) => {
    const r = computeTestSignal(
      { unit: 'bar', rangeLow: 0, rangeHigh: 10, signal: { kind: 'voltage', low, high: highV } },
      high(sp),
    )
    expect(r.unit).toBe('V')
    expect(r.value).toBe(volts)
  })
})

describe('switch', () => {
  it('is tested against a reference gauge at the setpoint; no signal is injected', () => {
    const r = computeTestSignal(
      { unit: 'bar', rangeLow: 0, rangeHigh: 10, signal: { kind: 'switch' } },
      high(6.5, { deadband: 0.3, tolerance: 0.1, toleranceUnit: 'eu' }),
    )
    expect(r.unit).toBe('eu')
    expect(r.value).toBe(6.5)
    expect(r.notes.some((n) => n.includes('reference gauge') && n.includes('No signal is injected'))).toBe(true)
    expect(alt(r, 'Expected reset point', 'bar')).toBe(6.2)
    expect(alt(r, 'Setpoint + tolerance', 'bar')).toBe(6.6)
  })
})

describe('engineering value from a reading in signal units', () => {
  it('compensates the cold junction in the emf domain (mV → °C, °F)', () => {
    // thermocouples.md CJC: K, E_meas 11.2083 mV at 25 °C → 300 °C
    expect(engineeringFromSignal(tcK, 11.2083, { coldJunctionC: 25 }).value).toBeCloseTo(300, 2)
    // 300 °C = 572 °F (arithmetic)
    expect(engineeringFromSignal({ ...tcK, unit: '°F' }, 11.2083, { coldJunctionC: 25 }).value).toBeCloseTo(572, 2)
    expect(() => engineeringFromSignal(tcK, 11.2083)).toThrow(MissingInputError)
  })

  it('refuses a type B reading below 0.291 mV', () => {
    const typeB: TestSignalInstrument = {
      ...tcK,
      signal: { kind: 'thermocouple', tcType: 'B', headTransmitter: false },
    }
    expect(() => engineeringFromSignal(typeB, 0.2, { coldJunctionC: 0 })).toThrow(OutOfRangeError)
  })

  it('reads ohms through IEC 60751', () => {
    // test-acceptance.md: 138.51 Ω ↔ 100.01 °C on a Pt100
    const pt100: TestSignalInstrument = {
      unit: '°C',
      rangeLow: 0,
      rangeHigh: 200,
      signal: { kind: 'rtd', element: 'Pt100', wires: 4, headTransmitter: false },
    }
    expect(engineeringFromSignal(pt100, 138.51).value).toBeCloseTo(100.01, 2)
  })

  it('reads mA linearly, with square root, or through 250 Ω, and flags NE 43 failures', () => {
    // analog-signals.md: 13.6 mA = 360 kPa on 0 … 600 kPa; 12 mA = 70.711 % flow with square root; 3 V ↔ 12 mA
    const kPa: TestSignalInstrument = {
      unit: 'kPa',
      rangeLow: 0,
      rangeHigh: 600,
      signal: { kind: 'current', sqrtExtraction: false },
    }
    expect(engineeringFromSignal(kPa, 13.6)).toEqual({ value: 360, unit: 'kPa', flags: [] })
    expect(engineeringFromSignal(kPa, 3, { signalUnit: 'V' }).value).toBeCloseTo(300, 9)
    const flow: TestSignalInstrument = {
      unit: 'm³/h',
      rangeLow: 0,
      rangeHigh: 100,
      signal: { kind: 'current', sqrtExtraction: true },
    }
    expect(Math.abs(engineeringFromSignal(flow, 12).value - 70.711)).toBeLessThanOrEqual(0.0005)
    // 3.5 mA ≤ 3.6 mA: failure low (NE 43)
    expect(engineeringFromSignal(kPa, 3.5).flags).toEqual(['ne43_failure_low'])
  })

  it('reads a head transmitter output in mA and a voltage signal in V', () => {
    const withHead: TestSignalInstrument = {
      ...tcK,
      signal: { kind: 'thermocouple', tcType: 'K', headTransmitter: true },
    }
    expect(engineeringFromSignal(withHead, 12, { signalUnit: 'mA' }).value).toBe(300)
    const volts: TestSignalInstrument = {
      unit: 'bar',
      rangeLow: 0,
      rangeHigh: 10,
      signal: { kind: 'voltage', low: 1, high: 5 },
    }
    expect(engineeringFromSignal(volts, 3).value).toBe(5)
  })

  it('refuses a signal unit the instrument does not have', () => {
    expect(() => engineeringFromSignal(tcK, 12, { signalUnit: 'mA' })).toThrow(UnitConversionError)
    expect(() => engineeringFromSignal(tcK, 100, { signalUnit: 'ohm' })).toThrow(UnitConversionError)
  })
})

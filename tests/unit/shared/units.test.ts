import { evaluate, unit, type Unit } from 'mathjs'
import { describe, expect, it } from 'vitest'
import { OutOfRangeError, UnitConversionError } from '../../../shared/domain/errors.ts'
import {
  canonicalUnit,
  convertDifference,
  convertValue,
  isKnownUnit,
  UNITS_BY_VARIABLE,
  variableOfUnit,
} from '../../../shared/domain/units.ts'

// Independent cross-check: mathjs 15 unit conversion (an open-source library with its own unit definitions).
// Units mathjs lacks are built from mathjs units: inH2O = 1 inch of water column = inch × (mmH2O / mm).
function mathUnit(value: number, ours: string): Unit {
  switch (ours) {
    case '°C':
      return unit(value, 'degC')
    case '°F':
      return unit(value, 'degF')
    case 'kg/cm²':
      return unit(value, 'kgf/cm^2')
    case 'inH2O':
      return evaluate(`${value} inch * (1 mmH2O / 1 mm)`) as Unit
    case 'm³/h':
      return unit(value, 'm^3/h')
    default:
      return unit(value, ours)
  }
}

const SI: Record<string, string> = { pressure: 'Pa', length: 'm', volume: 'm^3/s', mass: 'kg/s' }

function mathConvert(value: number, from: string, to: string, si: string): number {
  if (si === 'temperature') return mathUnit(value, from).toNumber(to === '°C' ? 'degC' : to === '°F' ? 'degF' : 'K')
  return mathUnit(value, from).toNumber(si) / mathUnit(1, to).toNumber(si)
}

function pairs(units: string[], si: string): [string, string, string][] {
  return units.flatMap((a) => units.map((b) => [a, b, si] as [string, string, string]))
}

const GROUPS: [string, string[]][] = [
  ['temperature', ['°C', '°F', 'K']],
  [SI.pressure!, ['Pa', 'kPa', 'MPa', 'bar', 'mbar', 'psi', 'kg/cm²', 'mmH2O', 'inH2O', 'mmHg']],
  [SI.length!, ['m', 'mm']],
  [SI.volume!, ['m³/h', 'L/min', 'L/s']],
  [SI.mass!, ['kg/h', 'kg/s', 't/h']],
]
const ALL_PAIRS = GROUPS.flatMap(([si, units]) => pairs(units, si))
const SAMPLES = [-40, 0, 1, 12.5, 100, 1013.25]

// mathjs defines mmHg as 133.322 Pa; this product uses the conventional 133.322 387 415 Pa (NIST SP 811, from memory),
// a relative difference of 2.9e-6, so pairs with mmHg are compared at 5e-6 relative. mathjs's psi (6894.757 292 76 Pa)
// differs from the exact lb·g_n/in² = 6894.757 293 17 Pa by 6e-11 relative, so psi pairs are compared at 1e-9.
function relTol(from: string, to: string): number {
  if (from === 'mmHg' || to === 'mmHg') return 5e-6
  return from === 'psi' || to === 'psi' ? 1e-9 : 1e-12
}

// kelvin has no negative values
function samples(from: string): number[] {
  return from === 'K' ? SAMPLES.map(Math.abs) : SAMPLES
}

function expectClose(actual: number, expected: number, rel: number): void {
  expect(Math.abs(actual - expected)).toBeLessThanOrEqual(rel * Math.max(1, Math.abs(expected)))
}

describe('convertValue against mathjs, every supported pair', () => {
  it.each(ALL_PAIRS)('%s → %s', (from, to, si) => {
    for (const v of samples(from))
      expectClose(convertValue(v, from, to), mathConvert(v, from, to, si), relTol(from, to))
  })
})

describe('convertDifference against mathjs, every supported pair', () => {
  it.each(ALL_PAIRS)('%s → %s', (from, to, si) => {
    for (const v of samples(from)) {
      // a difference is the conversion of v minus the conversion of 0 (removes any offset)
      const expected = mathConvert(v, from, to, si) - mathConvert(0, from, to, si)
      expectClose(convertDifference(v, from, to), expected, relTol(from, to))
    }
  })
})

describe('hand-known values', () => {
  // common knowledge / definitions (from memory): water boils at 100 °C = 212 °F at 1 atm; 0 °C = 273.15 K;
  // −40 °C = −40 °F; 1 bar = 100 kPa; 1 psi = 6.894 757 kPa; 1 kgf/cm² = 0.980 665 bar; 760 mmHg ≈ 101.325 kPa
  it.each([
    [100, '°C', '°F', 212, 6],
    [212, '°F', '°C', 100, 6],
    [0, '°C', 'K', 273.15, 6],
    [-40, '°C', '°F', -40, 6],
    [32, '°F', 'K', 273.15, 6],
    [1, 'bar', 'kPa', 100, 6],
    [1, 'psi', 'kPa', 6.894757, 6],
    [1, 'kg/cm²', 'bar', 0.980665, 6],
    [760, 'mmHg', 'kPa', 101.325, 3],
    [1000, 'mmH2O', 'mbar', 98.0665, 6],
    [1, 'm³/h', 'L/min', 16.666667, 6],
    [3.6, 't/h', 'kg/s', 1, 6],
    [1500, 'mm', 'm', 1.5, 6],
  ] as [number, string, string, number, number][])('%s %s = %s %s', (v, from, to, expected, digits) => {
    // 760 mmHg (conventional) = 101.325 014 kPa, 1.4e-7 above the standard atmosphere (which is 760 torr)
    expect(convertValue(v, from, to)).toBeCloseTo(expected, digits)
  })

  it('converts differences without the offset: 1 K = 1 °C = 1.8 °F', () => {
    // DOMAIN §5: "Deadbands, tolerances and other differences convert between units without the offset (1 K = 1.8 °F, not 33.8)"
    expect(convertDifference(1, 'K', '°F')).toBeCloseTo(1.8, 12)
    expect(convertDifference(10, '°C', '°F')).toBeCloseTo(18, 12)
    expect(convertDifference(9, '°F', 'K')).toBeCloseTo(5, 12)
    expect(convertDifference(2, '°C', 'K')).toBe(2)
    expect(convertValue(1, '°C', '°F')).toBeCloseTo(33.8, 12)
    expect(convertDifference(0.5, 'bar', 'kPa')).toBeCloseTo(50, 12)
  })

  it('returns the value unchanged for the same unit', () => {
    for (const units of Object.values(UNITS_BY_VARIABLE)) {
      for (const u of units) expect(convertValue(12.345, u, u)).toBe(12.345)
    }
  })
})

describe('gauge and absolute pressure', () => {
  // atmospheric pressure 1.01325 bar = 101.325 kPa (standard atmosphere, from memory); the arithmetic is p_abs = p_g + p_atm
  const atm = { value: 1.01325, unit: 'bar' }

  it('adds the atmospheric pressure from gauge to absolute, and subtracts it back', () => {
    expect(convertValue(1, 'bar(g)', 'bar(a)', { atmosphericPressure: atm })).toBeCloseTo(2.01325, 12)
    expect(convertValue(2.01325, 'bara', 'barg', { atmosphericPressure: atm })).toBeCloseTo(1, 12)
    // 10 psig with 101.325 kPa atmosphere: 68.947573 + 101.325 kPa (1 psi = 6.894757 kPa, from memory)
    expect(convertValue(10, 'psig', 'kPa(a)', { atmosphericPressure: { value: 101.325, unit: 'kPa' } })).toBeCloseTo(
      170.272573,
      5,
    )
  })

  it('keeps the reference when both sides share it, without needing the atmosphere', () => {
    expect(convertValue(1, 'bar(g)', 'psig')).toBeCloseTo(convertValue(1, 'bar', 'psi'), 12)
    expect(convertValue(2, 'bara', 'kPa(a)')).toBeCloseTo(200, 12)
  })

  it('refuses gauge ↔ absolute without an atmospheric pressure', () => {
    expect(() => convertValue(1, 'bar(g)', 'bar(a)')).toThrow(UnitConversionError)
    expect(() => convertValue(1, 'psia', 'psig')).toThrow(/atmospheric pressure/)
  })

  it('refuses a reference on one side only, and a gauge atmospheric pressure', () => {
    expect(() => convertValue(1, 'bar', 'bar(g)')).toThrow(UnitConversionError)
    expect(() => convertValue(1, 'bar(a)', 'kPa', { atmosphericPressure: atm })).toThrow(UnitConversionError)
    expect(() => convertValue(1, 'bar(g)', 'bar(a)', { atmosphericPressure: { value: 0, unit: 'bar(g)' } })).toThrow(
      UnitConversionError,
    )
    expect(() => convertValue(1, 'bar(g)', 'bar(a)', { atmosphericPressure: { value: 0, unit: 'bar' } })).toThrow(
      OutOfRangeError,
    )
  })

  it('converts pressure differences across references (no atmosphere needed)', () => {
    expect(convertDifference(0.5, 'bar(g)', 'kPa(a)')).toBeCloseTo(50, 12)
  })
})

describe('unknown and incompatible units', () => {
  it.each([
    ['furlong', 'm'],
    ['m', 'furlong'],
    ['bar', '°C'],
    ['%', 'm'],
    ['m³/h', 'kg/h'],
    ['MBAR', 'bar'],
    ['°C(g)', 'K'],
  ])('%s → %s throws UnitConversionError', (from, to) => {
    expect(() => convertValue(1, from, to)).toThrow(UnitConversionError)
    expect(() => convertDifference(1, from, to)).toThrow(UnitConversionError)
  })

  it('refuses temperatures below absolute zero', () => {
    expect(() => convertValue(-274, '°C', 'K')).toThrow(OutOfRangeError)
    expect(() => convertValue(-1, 'K', '°C')).toThrow(OutOfRangeError)
  })
})

describe('unit lists and spellings', () => {
  it('knows every unit it offers and maps it back to its variable', () => {
    for (const [variable, units] of Object.entries(UNITS_BY_VARIABLE)) {
      for (const u of units) {
        expect(isKnownUnit(u)).toBe(true)
        expect(canonicalUnit(u)).toBe(u)
        expect(variableOfUnit(u)).toBe(variable)
      }
    }
    expect(UNITS_BY_VARIABLE.pressure).toEqual(
      expect.arrayContaining(['Pa', 'kPa', 'MPa', 'bar', 'mbar', 'psi', 'kg/cm²', 'mmH2O', 'inH2O', 'mmHg']),
    )
  })

  it.each([
    ['degC', '°C'],
    ['℉', '°F'],
    ['kg/cm2', 'kg/cm²'],
    ['m3/h', 'm³/h'],
    ['barg', 'bar'],
    ['kPa(a)', 'kPa'],
    [' bar ', 'bar'],
  ])('accepts %s as %s', (spelling, canonical) => {
    expect(canonicalUnit(spelling)).toBe(canonical)
  })

  it('rejects unknown spellings', () => {
    expect(isKnownUnit('ppm')).toBe(false)
    expect(() => canonicalUnit('Mbar')).toThrow(UnitConversionError)
  })
})

describe('absolute pressure below perfect vacuum and NaN', () => {
  // An absolute pressure is ≥ 0 (0 is perfect vacuum), as a temperature is ≥ 0 K (physics; common practice).
  const atm = { value: 1.01325, unit: 'bar' }

  it.each([
    [-0.1, 'bar(a)', 'kPa(a)'],
    [-1, 'psia', 'bara'],
    [-0.001, 'bara', 'barg'],
  ])('refuses %s %s', (value, from, to) => {
    expect(() => convertValue(value, from, to, { atmosphericPressure: atm })).toThrow(OutOfRangeError)
    expect(() => convertValue(value, from, to, { atmosphericPressure: atm })).toThrow(/perfect vacuum/)
  })

  it('refuses a gauge pressure below −1 atmosphere when converted to absolute', () => {
    expect(() => convertValue(-1.2, 'bar(g)', 'bar(a)', { atmosphericPressure: atm })).toThrow(/perfect vacuum/)
    // −1.01325 bar(g) is perfect vacuum, 0 bar(a): accepted
    expect(convertValue(-1.01325, 'bar(g)', 'bar(a)', { atmosphericPressure: atm })).toBeCloseTo(0, 12)
  })

  it('accepts 0 bar(a) and keeps gauge pressures below zero (vacuum service)', () => {
    expect(convertValue(0, 'bar(a)', 'kPa(a)')).toBe(0)
    expect(convertValue(-0.5, 'bar(g)', 'kPa(g)')).toBeCloseTo(-50, 12)
  })

  it.each([Number.NaN, Number.POSITIVE_INFINITY])('refuses the value %s', (value) => {
    expect(() => convertValue(value, '°C', 'K')).toThrow(RangeError)
    expect(() => convertValue(value, 'bar', 'kPa')).toThrow(RangeError)
    expect(() => convertDifference(value, 'K', '°F')).toThrow(RangeError)
  })
})

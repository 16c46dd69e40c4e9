import { describe, expect, it } from 'vitest'
import { OutOfRangeError } from '../../../shared/domain/errors.ts'
import {
  mvSourceValue,
  TC_TYPES,
  temperatureFromMeasured,
  thermocoupleEmf,
  thermocoupleInverseApprox,
  thermocoupleRange,
  thermocoupleSeebeck,
  thermocoupleTemperature,
  type TcType,
} from '../../../shared/domain/thermocouple.ts'
import { thrownBy } from './thrown.ts'

// Source of every value below unless a line says otherwise: ITS-90 reference functions and tables,
// NIST SRD 60 / NIST Monograph 175 table values.

describe('thermocouple forward function E(t), reference junction 0 °C', () => {
  // [type, t °C, E computed from the coefficients (4 dp), NIST table value (3 dp)]
  // NIST SRD 60 table values (forward function).
  // Tolerances as stated there: ±0.0005 mV against the 3-dp table (table rounding); the 4-dp column is itself
  // rounded, so it is checked to half a unit of its last digit (±0.00005 mV).
  it.each([
    ['K', -200, -5.8914, -5.891],
    ['K', -100, -3.5536, -3.554],
    ['K', 0, 0.0, 0.0],
    ['K', 25, 1.0002, 1.0],
    ['K', 100, 4.0962, 4.096],
    ['K', 200, 8.1385, 8.138],
    ['K', 300, 12.2086, 12.209],
    ['K', 400, 16.3971, 16.397],
    ['K', 500, 20.6443, 20.644],
    ['K', 600, 24.9055, 24.905],
    ['K', 800, 33.2754, 33.275],
    ['K', 1000, 41.2756, 41.276],
    ['K', 1200, 48.8382, 48.838],
    ['K', 1372, 54.8864, 54.886],
    ['J', -210, -8.0954, -8.095],
    ['J', -200, -7.8905, -7.89],
    ['J', -100, -4.6325, -4.633],
    ['J', 0, 0.0, 0.0],
    ['J', 25, 1.2773, 1.277],
    ['J', 100, 5.2689, 5.269],
    ['J', 200, 10.7787, 10.779],
    ['J', 400, 21.8481, 21.848],
    ['J', 500, 27.3926, 27.393],
    ['J', 760, 42.9186, 42.919],
    ['J', 800, 45.4944, 45.494],
    ['J', 1000, 57.9534, 57.953],
    ['J', 1200, 69.5532, 69.553],
    ['T', -200, -5.603, -5.603],
    ['T', -100, -3.3786, -3.379],
    ['T', 0, 0.0, 0.0],
    ['T', 25, 0.992, 0.992],
    ['T', 100, 4.2785, 4.279],
    ['T', 200, 9.2881, 9.288],
    ['T', 300, 14.8619, 14.862],
    ['T', 400, 20.872, 20.872],
    ['E', -200, -8.8246, -8.825],
    ['E', -100, -5.2372, -5.237],
    ['E', 0, 0.0, 0.0],
    ['E', 100, 6.3189, 6.319],
    ['E', 200, 13.4213, 13.421],
    ['E', 400, 28.946, 28.946],
    ['E', 500, 37.0054, 37.005],
    ['E', 800, 61.0174, 61.017],
    ['E', 1000, 76.3728, 76.373],
    ['N', -200, -3.9904, -3.99],
    ['N', -100, -2.4068, -2.407],
    ['N', 0, 0.0, 0.0],
    ['N', 100, 2.7741, 2.774],
    ['N', 200, 5.9134, 5.913],
    ['N', 400, 12.9737, 12.974],
    ['N', 500, 16.7479, 16.748],
    ['N', 600, 20.6131, 20.613],
    ['N', 800, 28.4545, 28.455],
    ['N', 1000, 36.2555, 36.256],
    ['N', 1200, 43.8464, 43.846],
    ['N', 1300, 47.5128, 47.513],
    ['R', 0, 0.0, 0.0],
    ['R', 100, 0.6474, 0.647],
    ['R', 400, 3.4077, 3.408],
    ['R', 500, 4.4713, 4.471],
    ['R', 800, 7.9498, 7.95],
    ['R', 1000, 10.506, 10.506],
    ['R', 1200, 13.228, 13.228],
    ['R', 1500, 17.4507, 17.451],
    ['R', 1600, 18.8489, 18.849],
    ['R', 1768, 21.1015, 21.101],
    ['S', 0, 0.0, 0.0],
    ['S', 100, 0.6459, 0.646],
    ['S', 400, 3.2594, 3.259],
    ['S', 500, 4.2333, 4.233],
    ['S', 800, 7.345, 7.345],
    ['S', 1000, 9.5871, 9.587],
    ['S', 1200, 11.9505, 11.951],
    ['S', 1500, 15.5817, 15.582],
    ['S', 1600, 16.7768, 16.777],
    ['S', 1768, 18.6925, 18.693],
    ['B', 250, 0.2913, 0.291],
    ['B', 400, 0.7865, 0.787],
    ['B', 500, 1.2418, 1.242],
    ['B', 800, 3.1536, 3.154],
    ['B', 1000, 4.8343, 4.834],
    ['B', 1200, 6.7864, 6.786],
    ['B', 1500, 10.0991, 10.099],
    ['B', 1600, 11.263, 11.263],
    ['B', 1820, 13.8203, 13.82],
  ] as [TcType, number, number, number][])('type %s at %d °C: %d mV (table %d mV)', (type, t, e4, e3) => {
    const e = thermocoupleEmf(type, t)
    expect(Math.abs(e - e3)).toBeLessThanOrEqual(0.0005 + 1e-12)
    expect(Math.abs(e - e4)).toBeLessThanOrEqual(0.00005 + 1e-12)
  })

  // Further values for types with fewer than ten rows in the forward check table.
  it.each([
    // E(t_cj) and E(t_hot) = E_meas + E(t_cj) from the cold-junction check table of thermocouples.md (4 dp, computed there)
    ['T', 20, 0.7896, 0.00005],
    ['T', -50, -2.6086 + 0.7896, 0.0001],
    ['E', 25, 1.4951, 0.00005],
    ['E', 150, 8.2937 + 1.4951, 0.0001],
    ['K', 20, 0.7981, 0.00005],
    ['J', 22, 1.1223, 0.00005],
    ['N', 30, 0.793, 0.00005],
    // type B inverse sub-range boundary "700 to 1820 °C / 2.431 to 13.82 mV" of thermocouples.md (NIST table, 3 dp)
    ['B', 700, 2.431, 0.0005],
    // NIST ITS-90 table values quoted from memory (3 dp): T 50 °C, E 50 °C, B 100 °C
    ['T', 50, 2.036, 0.0005],
    ['E', 50, 3.048, 0.0005],
    ['B', 100, 0.033, 0.0005],
  ] as [TcType, number, number, number][])('type %s at %d °C ≈ %d mV', (type, t, expected, tol) => {
    expect(Math.abs(thermocoupleEmf(type, t) - expected)).toBeLessThanOrEqual(tol + 1e-12)
  })

  // Seebeck coefficients at 0 °C (µV/°C), computed from the forward functions in thermocouples.md
  it.each([
    ['K', 0, 39.5],
    ['K', 25, 40.5],
    ['J', 0, 50.4],
    ['T', 0, 38.7],
    ['E', 0, 58.7],
    ['N', 0, 25.9],
  ] as [TcType, number, number][])('type %s sensitivity at %d °C is %d µV/°C', (type, t, uvPerC) => {
    expect(Math.abs(thermocoupleSeebeck(type, t) * 1000 - uvPerC)).toBeLessThanOrEqual(0.05)
  })

  it('evaluates the type K exponential term only from 0 °C (the two sub-ranges meet at 0 °C)', () => {
    // NIST SRD 60 via thermocouples.md: K at 0 °C is 0.000 mV from both sides
    expect(Math.abs(thermocoupleEmf('K', 0))).toBeLessThan(1e-6)
    expect(Math.abs(thermocoupleEmf('K', -1e-9))).toBeLessThan(1e-6)
    // without the exponential term K at 100 °C would read about 0.12·exp(−0.0001183·26.97²) ≈ 0.109 mV lower
    expect(thermocoupleEmf('K', 100)).toBeGreaterThan(4.09)
  })
})

describe('thermocouple inverse t(E)', () => {
  // [type, E mV (table value), expected t °C, NIST inverse polynomial result (computed in thermocouples.md)]
  // NIST SRD 60 via thermocouples.md, "Check values — inverse function": within ±0.06 °C (±0.002 °C for R/S above 1064 °C)
  it.each([
    ['K', 4.096, 100, 99.963],
    ['K', 20.644, 500, 499.98],
    ['K', 41.276, 1000, 999.987],
    ['K', -3.554, -100, -100.004],
    ['J', 5.269, 100, 100.021],
    ['J', 42.919, 760, 760.043],
    ['T', 4.279, 100, 100.015],
    ['T', -3.379, -100, -100.01],
    ['E', 6.319, 100, 100.0],
    ['N', 16.748, 500, 499.996],
    ['R', 10.506, 1000, 1000.002],
    ['S', 9.587, 1000, 999.988],
    ['B', 4.834, 1000, 999.959],
  ] as [TcType, number, number, number][])('type %s at %d mV is %d °C', (type, e, t, polynomial) => {
    expect(Math.abs(thermocoupleInverseApprox(type, e)! - polynomial)).toBeLessThanOrEqual(0.0005 + 1e-9)
    expect(Math.abs(thermocoupleTemperature(type, e) - t)).toBeLessThanOrEqual(0.06)
  })

  it.each([
    // R and S above 1064 °C: ±0.002 °C (thermocouples.md); E from the 3-dp tables at 1500 and 1600 °C
    ['R', 17.451, 1500],
    ['R', 18.849, 1600],
    ['S', 15.582, 1500],
    ['S', 16.777, 1600],
  ] as [TcType, number, number][])('type %s at %d mV is %d °C within the table rounding', (type, e, t) => {
    // 0.0005 mV of table rounding at about 12 µV/°C is up to 0.04 °C; the exact inverse must land inside that
    const slope = thermocoupleSeebeck(type, t)
    expect(Math.abs(thermocoupleTemperature(type, e) - t)).toBeLessThanOrEqual(0.0005 / slope + 1e-6)
  })

  // Maximum |t_poly(E(t)) − t| over each type's NIST inverse range, computed in thermocouples.md:
  // K 0.054, J 0.049, T 0.038, E 0.022, N 0.039, R 0.019, S 0.020, B 0.026 °C. The refined inverse must sit on the
  // forward function (< 0.001 °C) while the bare polynomial shows exactly this size of deviation.
  it.each([
    ['K', 0.054],
    ['J', 0.049],
    ['T', 0.038],
    ['E', 0.022],
    ['N', 0.039],
    ['R', 0.019],
    ['S', 0.02],
    ['B', 0.026],
  ] as [TcType, number][])(
    'type %s: polynomial within %d °C of the forward function, refined inverse < 0.001 °C',
    (type, maxPoly) => {
      const range = thermocoupleRange(type)
      let worstPoly = 0
      let worstRefined = 0
      const start = type === 'B' ? 250 : range.tMin
      for (let t = start; t <= range.tMax; t += 0.1) {
        const e = thermocoupleEmf(type, t)
        const poly = thermocoupleInverseApprox(type, e)
        if (poly !== undefined && t >= -200) worstPoly = Math.max(worstPoly, Math.abs(poly - t))
        worstRefined = Math.max(worstRefined, Math.abs(thermocoupleTemperature(type, e) - t))
      }
      // lower bound with 0.003 °C slack: the stated maxima include the rounded range ends (e.g. R at exactly −50 °C,
      // E = −0.2265 mV, just outside the polynomial's −0.226 mV start, where this product uses Newton alone)
      expect(worstPoly).toBeGreaterThan(maxPoly - 0.003)
      expect(worstPoly).toBeLessThanOrEqual(maxPoly + 0.0005)
      expect(worstRefined).toBeLessThan(0.001)
    },
  )

  it.each([
    // below the NIST inverse ranges (−200 °C; −210 °C for J; −50 °C for R/S): Newton on the forward function alone
    ['K', -250],
    ['K', -270],
    ['E', -260],
    ['N', -265],
    ['T', -270],
    ['J', -210],
    ['R', -50],
    ['S', -50],
  ] as [TcType, number][])('type %s inverts below the NIST inverse range at %d °C', (type, t) => {
    expect(thermocoupleInverseApprox(type, thermocoupleEmf(type, t) - 0.01)).toBeUndefined()
    expect(Math.abs(thermocoupleTemperature(type, thermocoupleEmf(type, t)) - t)).toBeLessThan(0.001)
  })
})

describe('cold-junction compensation', () => {
  // [type, t_hot, t_cj, E_meas, E(t_cj), wrong shortcut t(E_meas) + t_cj]
  // thermocouples.md, "Check values — cold-junction compensation" (computed there from the NIST coefficients)
  const cases: [TcType, number, number, number, number, number][] = [
    ['K', 300, 25, 11.2083, 1.0002, 300.794],
    ['K', 100, 20, 3.2981, 0.7981, 100.739],
    ['J', 200, 22, 9.6565, 1.1223, 201.768],
    ['T', -50, 20, -2.6086, 0.7896, -54.211],
    ['N', 800, 30, 27.6615, 0.793, 809.806],
    ['E', 150, 25, 8.2937, 1.4951, 153.776],
  ]

  it.each(cases)('type %s, %d °C hot, %d °C cold junction: source %d mV', (type, tHot, tCj, eMeas, eCj) => {
    expect(Math.abs(mvSourceValue(type, tHot, tCj) - eMeas)).toBeLessThanOrEqual(0.00005 + 1e-12)
    expect(Math.abs(thermocoupleEmf(type, tCj) - eCj)).toBeLessThanOrEqual(0.00005 + 1e-12)
  })

  it.each(cases)('type %s: reading %d °C back from E_meas + E(t_cj)', (type, tHot, tCj, eMeas, _eCj, shortcut) => {
    // 4-dp rounding of E_meas (±0.00005 mV) moves t by at most 0.002 °C at ≥ 25 µV/°C
    expect(Math.abs(temperatureFromMeasured(type, eMeas, tCj) - tHot)).toBeLessThanOrEqual(0.002)
    // the temperature-domain shortcut is wrong by 0.7–10 °C (same table)
    const wrong = thermocoupleTemperature(type, eMeas) + tCj
    expect(Math.abs(wrong - shortcut)).toBeLessThanOrEqual(0.06)
    expect(Math.abs(wrong - tHot)).toBeGreaterThan(0.7)
  })

  it('gives 0 mV when the hot junction is at the cold-junction temperature', () => {
    // follows from E_meas = E(t_hot) − E(t_cj) (thermocouples.md)
    for (const type of TC_TYPES) expect(mvSourceValue(type, 40, 40)).toBe(0)
  })
})

describe('ranges: outside the reference function the functions throw, never extrapolate', () => {
  // forward ranges from thermocouples.md "Valid ranges"
  it.each([
    ['B', -0.1, 0, 1820],
    ['B', 1820.1, 0, 1820],
    ['E', -270.1, -270, 1000],
    ['E', 1000.1, -270, 1000],
    ['J', -210.1, -210, 1200],
    ['J', 1200.1, -210, 1200],
    ['K', -270.1, -270, 1372],
    ['K', 1372.1, -270, 1372],
    ['N', -270.1, -270, 1300],
    ['N', 1300.1, -270, 1300],
    ['R', -50.1, -50, 1768.1],
    ['R', 1768.2, -50, 1768.1],
    ['S', -50.1, -50, 1768.1],
    ['S', 1768.2, -50, 1768.1],
    ['T', -270.1, -270, 400],
    ['T', 400.1, -270, 400],
  ] as [TcType, number, number, number][])(
    'type %s at %d °C throws OutOfRangeError (%d … %d °C)',
    (type, t, min, max) => {
      const error = thrownBy(() => thermocoupleEmf(type, t))
      expect(error).toBeInstanceOf(OutOfRangeError)
      expect(error).toMatchObject({ quantity: 'temperature', value: t, min, max, unit: '°C' })
    },
  )

  it.each([
    ['K', 54.9],
    ['K', -6.46],
    ['J', 69.56],
    ['T', 20.88],
    ['E', 76.38],
    ['N', 47.52],
    ['R', 21.11],
    ['S', 18.7],
    ['R', -0.23],
    ['B', 13.83],
    ['K', Number.NaN],
  ] as [TcType, number][])('type %s inverse at %d mV throws OutOfRangeError', (type, e) => {
    expect(() => thermocoupleTemperature(type, e)).toThrow(OutOfRangeError)
  })

  it('accepts the exact range ends', () => {
    // K 1372 °C = 54.886 mV, −200 °C = −5.891 mV (NIST table via thermocouples.md)
    expect(thermocoupleEmf('K', 1372)).toBeCloseTo(54.886, 3)
    expect(thermocoupleTemperature('K', thermocoupleEmf('K', 1372))).toBeCloseTo(1372, 6)
    expect(thermocoupleTemperature('K', thermocoupleEmf('K', -270))).toBeCloseTo(-270, 3)
  })

  it('rejects an unknown type', () => {
    expect(() => thermocoupleEmf('X' as TcType, 100)).toThrow(TypeError)
  })
})

describe('type B low end', () => {
  it('has its forward function from 0 °C, slightly negative with a minimum near 21 °C', () => {
    // thermocouples.md: "Type B is double-valued below about 42 °C (EMF slightly negative …)"
    expect(thermocoupleEmf('B', 0)).toBe(0)
    expect(thermocoupleEmf('B', 21)).toBeLessThan(0)
    expect(thermocoupleEmf('B', 21)).toBeLessThan(thermocoupleEmf('B', 10))
    expect(thermocoupleEmf('B', 21)).toBeLessThan(thermocoupleEmf('B', 32))
    expect(Math.abs(thermocoupleEmf('B', 42))).toBeLessThan(0.0001)
    // two temperatures with (nearly) the same emf: 10 °C and 32 °C
    expect(Math.abs(thermocoupleEmf('B', 10) - thermocoupleEmf('B', 32))).toBeLessThan(0.0002)
  })

  it.each([0.29, 0.1, 0.0, -0.002, 0.033])('refuses to invert %d mV (below 0.291 mV / 250 °C) and says why', (e) => {
    const error = thrownBy(() => thermocoupleTemperature('B', e))
    expect(error).toBeInstanceOf(OutOfRangeError)
    expect(error).toMatchObject({ quantity: 'emf', min: 0.291, unit: 'mV' })
    expect((error as Error).message).toMatch(/21 °C/)
    expect((error as Error).message).toMatch(/250 °C/)
  })

  it('inverts from the NIST inverse range start, 250 °C = 0.291 mV', () => {
    // thermocouples.md: type B inverse 250–1820 °C / 0.291–13.820 mV; E(250 °C) = 0.2913 mV
    const t = thermocoupleTemperature('B', 0.291)
    expect(t).toBeGreaterThan(249.8)
    expect(t).toBeLessThan(250)
    expect(thermocoupleTemperature('B', thermocoupleEmf('B', 250))).toBeCloseTo(250, 6)
    expect(thermocoupleRange('B')).toMatchObject({ tMin: 0, tMax: 1820, emfMin: 0.291 })
  })

  it('compensates a cold junction near ambient, where E(t_cj) is a few µV', () => {
    // E_B(25 °C) is about −0.002 mV (computed from the NIST coefficients); the hot-end result barely moves
    expect(Math.abs(thermocoupleEmf('B', 25))).toBeLessThan(0.003)
    const eMeas = mvSourceValue('B', 1000, 25)
    expect(temperatureFromMeasured('B', eMeas, 25)).toBeCloseTo(1000, 6)
    expect(Math.abs(thermocoupleTemperature('B', eMeas) - 1000)).toBeLessThan(0.5)
  })
})

describe('range ends, table rounding and the cold junction', () => {
  // NIST ITS-90 type K table: −270 °C = −6.458 mV, printed to 0.001 mV;
  // the reference function gives −6.4577 mV there. A table value within half the printed step of the range end is
  // accepted and clamped to the end.
  it('reads the rounded table value −6.458 mV as −270 °C (type K)', () => {
    expect(thermocoupleTemperature('K', -6.458)).toBe(-270)
  })

  it('reads 54.886 mV (the table value at 1372 °C, type K) as 1372 °C', () => {
    expect(thermocoupleTemperature('K', 54.886)).toBeCloseTo(1372, 1)
  })

  it('still refuses an emf beyond half a table step outside the range', () => {
    expect(() => thermocoupleTemperature('K', -6.459)).toThrow(OutOfRangeError)
  })

  it("reads back the product's own mV source value at the bottom of the range", () => {
    // −270 °C with the cold junction at 60 °C: E(−270) − E(60), read back at 60 °C must give −270 °C
    const mv = mvSourceValue('K', -270, 60)
    expect(temperatureFromMeasured('K', mv, 60)).toBeCloseTo(-270, 6)
  })

  it('shows a refused value with the digits that set it apart from the range end', () => {
    // type K is defined up to 1372 °C (thermocouples.md); 1372.0001 °C must not read "1372"
    expect(() => thermocoupleEmf('K', 1372.0001)).toThrow('temperature 1372.0001 °C is outside the valid range')
  })

  it('names the cold junction when a type B cold junction is outside the type B range', () => {
    // type B is defined from 0 to 1820 °C (thermocouples.md): a −5 °C cold junction cannot be compensated
    expect(() => temperatureFromMeasured('B', 2, -5)).toThrow(/^cold-junction temperature -5 °C/)
    expect(() => mvSourceValue('B', 800, -5)).toThrow(/^cold-junction temperature/)
  })
})

import { describe, expect, it } from 'vitest'
import { OutOfRangeError } from '../../../shared/domain/errors.ts'
import { CVD_A, CVD_B, R0_BY_ELEMENT, rtdResistance, rtdTemperature } from '../../../shared/domain/rtd.ts'
import { thrownBy } from './thrown.ts'

// IEC 60751 Callendar–Van Dusen table: resistance values computed independently of this code from the IEC 60751
// constants, which agree with IEC 60751 Table 1 / ASTM E1137 to the printed 0.01 Ω).
const TABLE: [number, number, number][] = [
  [-200, 18.5201, 185.201],
  [-196, 20.2465, 202.465],
  [-100, 60.2558, 602.558],
  [-50, 80.3063, 803.063],
  [-40, 84.2707, 842.707],
  [-30, 88.2217, 882.217],
  [-20, 92.1599, 921.599],
  [0, 100.0, 1000.0],
  [20, 107.7935, 1077.935],
  [25, 109.7347, 1097.347],
  [37, 114.3817, 1143.817],
  [50, 119.3971, 1193.971],
  [100, 138.5055, 1385.055],
  [150, 157.3251, 1573.251],
  [200, 175.856, 1758.56],
  [250, 194.0981, 1940.981],
  [300, 212.0515, 2120.515],
  [400, 247.092, 2470.92],
  [450, 264.1791, 2641.791],
  [500, 280.9775, 2809.775],
  [600, 313.708, 3137.08],
  [650, 329.6401, 3296.401],
  [700, 345.2835, 3452.835],
  [800, 375.704, 3757.04],
  [850, 390.4811, 3904.811],
]

describe('IEC 60751 resistance R(t)', () => {
  // Pt100 column to 4 dp and Pt1000 to 3 dp: half a unit of the last printed digit
  it.each(TABLE)('%d °C: Pt100 %d Ω, Pt1000 %d Ω', (t, pt100, pt1000) => {
    expect(Math.abs(rtdResistance(t, R0_BY_ELEMENT.Pt100) - pt100)).toBeLessThanOrEqual(0.00005 + 1e-12)
    expect(Math.abs(rtdResistance(t, R0_BY_ELEMENT.Pt1000) - pt1000)).toBeLessThanOrEqual(0.0005 + 1e-12)
  })

  it('has α = (R100 − R0)/(100·R0) = 0.00385055 and 0.39083 Ω/°C at 0 °C for a Pt100', () => {
    // rtd.md: α = A + 100·B = 0.00385055 °C⁻¹; dR/dt at 0 °C = R0·A = 0.39083 Ω/°C (computed there)
    expect((rtdResistance(100, 100) - 100) / (100 * 100)).toBeCloseTo(0.00385055, 8)
    expect((rtdResistance(0.001, 100) - rtdResistance(-0.001, 100)) / 0.002).toBeCloseTo(0.39083, 4)
  })

  it.each([-200.01, 850.01, Number.NaN, Number.POSITIVE_INFINITY])(
    'throws OutOfRangeError at %d °C (valid −200 … 850 °C)',
    (t) => {
      const error = thrownBy(() => rtdResistance(t, 100))
      expect(error).toBeInstanceOf(OutOfRangeError)
      expect(error).toMatchObject({ quantity: 'temperature', min: -200, max: 850, unit: '°C' })
    },
  )

  it('refuses a non-positive R0', () => {
    expect(() => rtdResistance(0, 0)).toThrow(RangeError)
  })
})

describe('IEC 60751 inverse t(R)', () => {
  // rtd.md "Inverse checks (computed)"
  it.each([
    [138.5055, 100, 100],
    [175.856, 100, 200],
    [60.2558, 100, -100],
    [18.5201, 100, -200],
    [1385.055, 1000, 100],
  ])('%d Ω (R0 = %d Ω) is %d °C', (r, r0, t) => {
    expect(Math.abs(rtdTemperature(r, r0) - t)).toBeLessThanOrEqual(0.0005)
  })

  it('uses the full equation below 0 °C: the quadratic alone would give −100.208 °C at 60.2558 Ω', () => {
    // rtd.md: "Using the quadratic only at −100 °C gives −100.208 °C (0.21 °C error) — a good negative test"
    const w = 60.2558 / 100
    const quadraticOnly = (-CVD_A + Math.sqrt(CVD_A * CVD_A - 4 * CVD_B * (1 - w))) / (2 * CVD_B)
    expect(quadraticOnly).toBeCloseTo(-100.208, 3)
    expect(Math.abs(rtdTemperature(60.2558, 100) - quadraticOnly)).toBeGreaterThan(0.2)
  })

  it('reads 138.51 Ω as 100.01 °C (Pt100)', () => {
    // IEC 60751 table: 138.51 Ω ↔ 100.01 °C (Pt100, rounded to 0.01)
    expect(rtdTemperature(138.51, 100)).toBeCloseTo(100.01, 2)
  })

  it.each([R0_BY_ELEMENT.Pt100, R0_BY_ELEMENT.Pt1000])('round-trips −200 … 850 °C within 1e-6 °C (R0 = %d Ω)', (r0) => {
    let worst = 0
    for (let t = -200; t <= 850; t += 0.25)
      worst = Math.max(worst, Math.abs(rtdTemperature(rtdResistance(t, r0), r0) - t))
    expect(worst).toBeLessThan(1e-6)
  })

  it.each([18.514, 390.487, Number.NaN])('throws OutOfRangeError at %d Ω for a Pt100', (r) => {
    const error = thrownBy(() => rtdTemperature(r, 100))
    expect(error).toBeInstanceOf(OutOfRangeError)
    expect(error).toMatchObject({ quantity: 'resistance', unit: 'ohm' })
    expect((error as OutOfRangeError).min).toBeCloseTo(18.5201, 4)
    expect((error as OutOfRangeError).max).toBeCloseTo(390.4811, 4)
  })
})

describe('IEC 60751 table values at the range ends', () => {
  // The IEC 60751 table prints 18.52 Ω at −200 °C and 390.48 Ω at 850 °C for a
  // Pt100, rounded to 0.01 Ω; the equation gives 18.5201 and 390.4811 Ω. A value within half the printed step of the
  // range end is accepted and clamped to the end; beyond that it is refused (above).
  it.each([
    [18.52, 100, -200],
    [390.485, 100, 850],
    [185.2, 1000, -200],
    [3904.85, 1000, 850],
  ])('reads the table value %d Ω (R0 %d Ω) as %d °C', (r, r0, t) => {
    expect(rtdTemperature(r, r0)).toBe(t)
  })
})

import { evaluate } from 'mathjs'
import { describe, expect, it } from 'vitest'
import {
  chiSquareQuantile,
  exposureHours,
  judgeAssumedRate,
  observedRate,
  rateLowerBound,
  rateUpperBound,
} from '../../../shared/domain/observed-rates.ts'

describe('chi-square quantiles against published table values', () => {
  // NIST/SEMATECH e-Handbook of Statistical Methods, 1.3.6.7.4 "Critical values of the chi-square distribution"
  // (upper-tail critical values, printed to three decimals; values from memory of that table).
  it.each([
    [0.9, 1, 2.706],
    [0.9, 2, 4.605],
    [0.9, 4, 7.779],
    [0.9, 10, 15.987],
    [0.95, 2, 5.991],
    [0.95, 10, 18.307],
    [0.99, 4, 13.277],
    [0.1, 10, 4.865],
  ])('χ²(%s; %s) = %s', (p, dof, published) => {
    expect(Math.abs(chiSquareQuantile(p, dof) - published)).toBeLessThan(0.0005)
  })

  // With two degrees of freedom the chi-square is an exponential: χ²(p; 2) = −2·ln(1 − p) (closed form, evaluated
  // by mathjs); this covers the 70 % level, which the printed tables do not list.
  it.each([0.7, 0.9, 0.5])('χ²(%s; 2) equals −2·ln(1 − p)', (p) => {
    const expected = evaluate('-2 * log(1 - p)', { p }) as number
    expect(Math.abs(chiSquareQuantile(p, 2) / expected - 1)).toBeLessThan(1e-12)
  })

  it('refuses probabilities outside (0, 1) and non-positive degrees of freedom', () => {
    expect(() => chiSquareQuantile(1, 2)).toThrow(RangeError)
    expect(() => chiSquareQuantile(0.7, 0)).toThrow(RangeError)
    expect(() => chiSquareQuantile(Number.NaN, 2)).toThrow(RangeError)
  })
})

describe('rate bounds', () => {
  it('zero failures in 1e6 h: the 90 % bound is ln(10)/T = 2.303e−6 /h, the 70 % bound −ln(0.3)/T', () => {
    // zero-failure bound −ln(1 − c)/T (exponential law; from memory, any reliability text)
    expect(rateUpperBound(0, 1e6, 0.9)).toBeCloseTo(Math.LN10 / 1e6, 15)
    expect(rateUpperBound(0, 1e6, 0.7)).toBeCloseTo(-Math.log(0.3) / 1e6, 15)
    expect(rateLowerBound(0, 1e6, 0.9)).toBe(0)
  })

  it('4 failures in 1e6 h: the 90 % upper bound is χ²(0.9; 10)/(2T) = 15.987/2e6', () => {
    // χ²(0.90; 10) = 15.987 (NIST table above)
    expect(Math.abs(rateUpperBound(4, 1e6, 0.9) - 15.987 / 2e6)).toBeLessThan(1e-9)
    // lower bound at 90 %: χ²(0.10; 8) = 3.490 (NIST table, lower-tail critical value; from memory)
    expect(Math.abs(rateLowerBound(4, 1e6, 0.9) - 3.49 / 2e6)).toBeLessThan(1e-9)
  })

  it('an observed rate carries the point estimate and both upper bounds, 90 % above 70 %', () => {
    const r = observedRate(2, 5e5)
    expect(r.pointEstimate).toBe(4e-6)
    expect(r.upper90).toBeGreaterThan(r.upper70)
    expect(r.upper70).toBeGreaterThan(r.pointEstimate)
  })

  it('refuses a negative or fractional count and a zero exposure', () => {
    expect(() => rateUpperBound(-1, 1e6, 0.9)).toThrow(RangeError)
    expect(() => rateUpperBound(1.5, 1e6, 0.9)).toThrow(RangeError)
    expect(() => rateUpperBound(1, 0, 0.9)).toThrow(RangeError)
  })

  it('counts exposure from the later of the period start and the start of service', () => {
    const period = { from: new Date('2026-01-01T00:00:00Z'), to: new Date('2026-01-11T00:00:00Z') }
    expect(exposureHours(period, new Date('2025-06-01T00:00:00Z'))).toBe(240)
    expect(exposureHours(period, new Date('2026-01-06T00:00:00Z'))).toBe(120)
    expect(exposureHours(period, new Date('2026-02-01T00:00:00Z'))).toBe(0)
  })
})

describe('the 70 % bound of one failure and the verdict against an assumed λDU', () => {
  // With an even number 2k of degrees of freedom the chi-square distribution function has the closed form
  // P(χ² ≤ x) = 1 − e^(−x/2)·Σ_{j<k} (x/2)^j / j! (the Poisson–chi-square relation; from memory), evaluated by mathjs.
  it('χ²(0.7; 4) satisfies the closed form and matches the printed 4.878', () => {
    const x = chiSquareQuantile(0.7, 4)
    const cdf = evaluate('1 - exp(-x / 2) * (1 + x / 2)', { x }) as number
    expect(Math.abs(cdf - 0.7)).toBeLessThan(1e-9)
    // 4.878: the 0.30 upper-tail column of the usual chi-square tables (from memory)
    expect(Math.abs(x - 4.878)).toBeLessThan(0.0005)
  })

  it('one failure in 17 520 h: 70 % bound 4.878/35 040 = 1.392e−4 /h, above an assumed 5e−7 /h', () => {
    const r = observedRate(1, 17_520)
    // within the table's rounding (±0.0005 on χ²)
    expect(Math.abs(r.upper70 - 4.878 / 35_040)).toBeLessThan(0.0005 / 35_040)
    expect(judgeAssumedRate(r, 5e-7)).toBe('above')
    expect(judgeAssumedRate(r, 2e-4)).toBe('supported')
  })

  it('no failure: a bound above the assumption means too little experience, not a rate above it', () => {
    // zero-failure bound at 70 %: −ln(0.3)/T = 1.204/T (closed form above); with T = 1e6 h that is 1.204e−6 /h
    const r = observedRate(0, 1e6)
    expect(judgeAssumedRate(r, 1e-6)).toBe('not_enough_experience')
    expect(judgeAssumedRate(r, 1.3e-6)).toBe('supported')
  })

  it('refuses an assumed λDU that is not a positive number', () => {
    const r = observedRate(1, 1e6)
    expect(() => judgeAssumedRate(r, 0)).toThrow(RangeError)
    expect(() => judgeAssumedRate(r, Number.NaN)).toThrow(RangeError)
  })
})

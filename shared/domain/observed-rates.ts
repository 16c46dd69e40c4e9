// Observed failure and demand rates from counted events over an exposure time, with one-sided chi-square
// confidence bounds. Formulas, sources and limits: docs/domain/observed-rates.md.
import chisquareQuantile from '@stdlib/stats-base-dists-chisquare-quantile'

/** Confidence levels offered for the upper bound of λDU (70 % and 90 %, as used in prior-use arguments). */
export const CONFIDENCE_LEVELS = [0.7, 0.9] as const

/**
 * The chi-square quantile χ²(p; ν): the value below which a chi-square variable with ν degrees of freedom
 * falls with probability p.
 */
export function chiSquareQuantile(p: number, dof: number): number {
  if (!(p > 0 && p < 1)) throw new RangeError('the probability must lie between 0 and 1 (exclusive)')
  if (!(Number.isFinite(dof) && dof > 0)) throw new RangeError('the degrees of freedom must be a positive number')
  return chisquareQuantile(p, dof)
}

function check(n: number, hours: number): void {
  if (!(Number.isInteger(n) && n >= 0)) throw new RangeError('the number of failures must be a whole number ≥ 0')
  if (!(Number.isFinite(hours) && hours > 0)) throw new RangeError('the exposure time must be > 0 h')
}

/**
 * One-sided upper confidence bound of a constant failure rate from n failures in `hours` of exposure (time-terminated
 * observation): λ_U = χ²(c; 2n + 2) / (2T). Standard reliability practice for a Poisson count (e.g. MIL-HDBK-338B;
 * from memory); with n = 0 it gives the "zero failures" bound −ln(1 − c)/T.
 */
export function rateUpperBound(n: number, hours: number, confidence: number): number {
  check(n, hours)
  return chiSquareQuantile(confidence, 2 * n + 2) / (2 * hours)
}

/** One-sided lower confidence bound: λ_L = χ²(1 − c; 2n) / (2T), and 0 when nothing was observed. */
export function rateLowerBound(n: number, hours: number, confidence: number): number {
  check(n, hours)
  return n === 0 ? 0 : chiSquareQuantile(1 - confidence, 2 * n) / (2 * hours)
}

/** Point estimate n / T. */
export function ratePointEstimate(n: number, hours: number): number {
  check(n, hours)
  return n / hours
}

/** An observed λDU held against an assumed one. */
export interface ObservedRate {
  failures: number
  exposureHours: number
  pointEstimate: number
  upper70: number
  upper90: number
}

export function observedRate(failures: number, exposureHours: number): ObservedRate {
  return {
    failures,
    exposureHours,
    pointEstimate: ratePointEstimate(failures, exposureHours),
    upper70: rateUpperBound(failures, exposureHours, 0.7),
    upper90: rateUpperBound(failures, exposureHours, 0.9),
  }
}

/**
 * Hours between two instants, inside a period, after a start of service (commissioning or entry); 0 when the
 * service starts after the period.
 */
export function exposureHours(period: { from: Date; to: Date }, inServiceFrom: Date): number {
  const start = Math.max(period.from.getTime(), inServiceFrom.getTime())
  return Math.max(0, (period.to.getTime() - start) / 3_600_000)
}

/** Confidence level at which an observed λDU is held against the assumed one (the 70 % of prior-use arguments). */
export const FLAG_CONFIDENCE = 0.7

/**
 * How an observed λDU stands against the λDU assumed in a subsystem (docs/domain/observed-rates.md#the-flag):
 * - `supported`: the upper bound at 70 % lies at or below the assumption;
 * - `above`: failures were found and the upper bound at 70 % lies above the assumption (flagged; a change request
 *   with the bound as the new figure is offered);
 * - `not_enough_experience`: no failure found, but the exposure is too short for the zero-failure bound to reach
 *   down to the assumption: the operating experience does not yet support it (shown, not flagged).
 */
export type AssumptionVerdict = 'supported' | 'above' | 'not_enough_experience'

export function judgeAssumedRate(observed: ObservedRate, assumedLambdaDu: number): AssumptionVerdict {
  if (!(Number.isFinite(assumedLambdaDu) && assumedLambdaDu > 0))
    throw new RangeError('the assumed λDU must be a positive number per hour')
  if (observed.upper70 <= assumedLambdaDu) return 'supported'
  return observed.failures === 0 ? 'not_enough_experience' : 'above'
}

// Judging a trip test (DOMAIN.md §3 TripTest, §4 degraded state). Rules and their sources: docs/trip-tests.md.

/** As-found result of a trip test. */
export type AsFoundResult = 'in_tolerance' | 'out_safe' | 'out_dangerous' | 'no_trip'
/** As-left result of a trip test. */
export type AsLeftResult = 'in_tolerance' | 'out'

/** What the judgement needs: the limit's direction and setpoint, the tolerance in engineering units. */
export interface JudgeInput {
  direction: 'high' | 'low'
  setpoint: number
  /** ± tolerance in engineering units (convert % of span before calling). */
  tolerance: number
  /** Where it tripped, engineering units; null when it did not trip at all. */
  asFound: number | null
  /** Where it trips after adjustment; null when nothing was adjusted (as-left = as-found). */
  asLeft: number | null
  finalElementOk: boolean | null
  responseTimeSec: number | null
  requiredResponseTimeSec: number | null
}

export interface Judgement {
  asFoundResult: AsFoundResult
  asLeftResult: AsLeftResult
  /** The protection is proven: as-found neither dangerous nor absent, as-left in tolerance, final element acted, fast enough. */
  passed: boolean
  /** Why it failed, one sentence per reason. */
  reasons: string[]
}

// Scaled comparison so 780 + 6 = 786 exactly (values come from PostgreSQL numeric).
const EPS = 1e-9

/**
 * As-found: in tolerance when |found − setpoint| ≤ tolerance; beyond it on the side where the trip acts later than set
 * (above a high setpoint, below a low one) it is out on the dangerous side, on the other side out on the safe side
 * (it trips early: spurious trips, not lost protection). Common practice; see test-acceptance.md in the references.
 */
export function judgeAsFound(
  direction: 'high' | 'low',
  setpoint: number,
  tolerance: number,
  asFound: number | null,
): AsFoundResult {
  if (asFound === null) return 'no_trip'
  const dev = asFound - setpoint
  if (Math.abs(dev) <= tolerance + EPS) return 'in_tolerance'
  const late = direction === 'high' ? dev > 0 : dev < 0
  return late ? 'out_dangerous' : 'out_safe'
}

/** As-left: in tolerance when |left − setpoint| ≤ tolerance, else out. */
export function judgeAsLeft(setpoint: number, tolerance: number, asLeft: number): AsLeftResult {
  return Math.abs(asLeft - setpoint) <= tolerance + EPS ? 'in_tolerance' : 'out'
}

/** Judges a whole test: the results and whether the protection is proven. */
export function judgeTripTest(i: JudgeInput): Judgement {
  if (!(i.tolerance >= 0)) throw new RangeError('tolerance must not be negative')
  const asFoundResult = judgeAsFound(i.direction, i.setpoint, i.tolerance, i.asFound)
  const left = i.asLeft ?? i.asFound
  const asLeftResult: AsLeftResult = left === null ? 'out' : judgeAsLeft(i.setpoint, i.tolerance, left)
  const reasons: string[] = []
  if (asFoundResult === 'no_trip') reasons.push('It did not trip')
  if (asFoundResult === 'out_dangerous')
    reasons.push(`As found it tripped at ${i.asFound}, beyond ${i.setpoint} ± ${i.tolerance} on the dangerous side`)
  if (asLeftResult === 'out')
    reasons.push(
      left === null
        ? 'No as-left value: the limit was left without a proven trip point'
        : `As left it trips at ${left}, outside ${i.setpoint} ± ${i.tolerance}`,
    )
  if (i.finalElementOk === false) reasons.push('The final element did not act')
  if (
    i.responseTimeSec !== null &&
    i.requiredResponseTimeSec !== null &&
    i.responseTimeSec > i.requiredResponseTimeSec + EPS
  ) {
    reasons.push(`Response took ${i.responseTimeSec} s; at most ${i.requiredResponseTimeSec} s is required`)
  }
  return { asFoundResult, asLeftResult, passed: reasons.length === 0, reasons }
}

/** Converts a tolerance to engineering units: eu as is, percent_span as a share of the instrument span. */
export function toleranceInEu(
  tolerance: number,
  unit: 'eu' | 'percent_span',
  rangeLow: number,
  rangeHigh: number,
): number {
  return unit === 'eu' ? tolerance : (tolerance / 100) * (rangeHigh - rangeLow)
}

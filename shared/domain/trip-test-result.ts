// Judging a trip test and its channels. Rules and their sources: docs/trip-tests.md#judging-a-test.

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
  /**
   * The protection is proven: as-found neither dangerous nor absent, as-left in tolerance,
   * final element acted, fast enough.
   */
  passed: boolean
  /** Why it failed, one sentence per reason. */
  reasons: string[]
}

// Scaled comparison so 780 + 6 = 786 exactly (values come from PostgreSQL numeric).
const EPS = 1e-9

/**
 * As-found: in tolerance when |found − setpoint| ≤ tolerance;
 * beyond it on the side where the trip acts later than set
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

/** MooN voting: the function acts when at least M of its N channels trip. */
export const VOTING: Readonly<Record<'1oo1' | '1oo2' | '1oo2D' | '2oo2' | '2oo3' | '1oo3', { m: number; n: number }>> =
  {
    '1oo1': { m: 1, n: 1 },
    '1oo2': { m: 1, n: 2 },
    // 1oo2D votes 1oo2 on its channels; its diagnostics do not change how a proof test judges each channel
    '1oo2D': { m: 1, n: 2 },
    '2oo2': { m: 2, n: 2 },
    '2oo3': { m: 2, n: 3 },
    '1oo3': { m: 1, n: 3 },
  }

export interface ChannelJudgement {
  asFoundResult: AsFoundResult
  asLeftResult: AsLeftResult
  /** the channel tripped neither late nor not at all, and is left in tolerance */
  passed: boolean
}

export interface VotedJudgement {
  channels: ChannelJudgement[]
  /** channels that tripped on the safe side of setpoint + tolerance (in tolerance or early) */
  tripped: number
  required: number
  /** the vote was reached: at least M channels tripped in time */
  acted: boolean
  /**
   * The function's as-found: the value at which the M-th channel tripped in the direction of the excursion (the
   * M-th lowest for a high trip, the M-th highest for a low one), taken over the channels that tripped; null when
   * fewer than M tripped.
   */
  votedAsFound: number | null
  /** the same over the as-left values (as-found where not adjusted); null when fewer than M are left tripping */
  votedAsLeft: number | null
}

/**
 * Judges a voted function tested channel by channel: each channel against setpoint ± tolerance, then the vote.
 * A channel that trips late (out on the dangerous side) or not at all counts as a dangerous failure found, even
 * when the other channels still reach the vote (the redundancy the SIL relies on is lost). Common practice for
 * voted sensors (IEC 61511-1 §16.3 asks each part of the function to be proven; from memory).
 */
export function judgeVotedChannels(input: {
  direction: 'high' | 'low'
  setpoint: number
  tolerance: number
  architecture: keyof typeof VOTING
  channels: { asFound: number | null; asLeft: number | null }[]
}): VotedJudgement {
  const { m, n } = VOTING[input.architecture]
  if (input.channels.length !== n)
    throw new RangeError(`${input.architecture} has ${n} channels; ${input.channels.length} were given`)
  const channels = input.channels.map((c): ChannelJudgement => {
    const asFoundResult = judgeAsFound(input.direction, input.setpoint, input.tolerance, c.asFound)
    const left = c.asLeft ?? c.asFound
    const asLeftResult: AsLeftResult = left === null ? 'out' : judgeAsLeft(input.setpoint, input.tolerance, left)
    const passed = asFoundResult !== 'no_trip' && asFoundResult !== 'out_dangerous' && asLeftResult === 'in_tolerance'
    return { asFoundResult, asLeftResult, passed }
  })
  const order = (values: number[]) => values.sort((a, b) => (input.direction === 'high' ? a - b : b - a))
  const found = order(input.channels.map((c) => c.asFound).filter((v): v is number => v !== null))
  const left = order(input.channels.map((c) => c.asLeft ?? c.asFound).filter((v): v is number => v !== null))
  const tripped = channels.filter((c) => c.asFoundResult === 'in_tolerance' || c.asFoundResult === 'out_safe').length
  return {
    channels,
    tripped,
    required: m,
    acted: tripped >= m,
    votedAsFound: found.length >= m ? found[m - 1] : null,
    votedAsLeft: left.length >= m ? left[m - 1] : null,
  }
}

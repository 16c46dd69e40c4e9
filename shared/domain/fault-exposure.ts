// Fault exposure of a safety function: the time it may have stood with a dangerous undetected failure that a proof
// test then found. Convention, sources and limits: docs/bypasses.md#fault-exposure.

/** A signed test of a function as the fault exposure needs it. */
export interface TestOutcome {
  at: Date
  /** the test passed (the function is proven at its end) */
  passed: boolean
  /** the as-found result, or a channel's, was dangerous: tripped late or not at all */
  dangerousAsFound: boolean
}

/** One span of fault exposure: from the last passing test before the failing one to the repair. */
export interface FaultExposureSpan {
  from: Date
  to: Date
  foundAt: Date
  /** not yet repaired: the span runs to now */
  ongoing: boolean
}

/** The site convention the product applies, stated on screen with the figures. */
export const FAULT_EXPOSURE_CONVENTION =
  'Fault exposure counts from the last passing test before the test that found a dangerous failure (or from ' +
  'commissioning) to the repair, proven by the next passing test (or to now while not repaired): the failure may ' +
  'have occurred at any time since the function was last proven.'

/**
 * The spans in which a function may have stood with a dangerous undetected failure (common practice: without
 * evidence of when the failure occurred it is assumed present since the function was last proven). A failure found
 * while an earlier one is still unrepaired extends that span, never counts twice.
 */
export function faultExposureSpans(tests: readonly TestOutcome[], inServiceFrom: Date, now: Date): FaultExposureSpan[] {
  const sorted = [...tests].sort((a, b) => a.at.getTime() - b.at.getTime())
  const spans: FaultExposureSpan[] = []
  let lastGood = inServiceFrom
  for (let i = 0; i < sorted.length; i++) {
    const t = sorted[i]
    if (t.dangerousAsFound) {
      const repair = sorted.slice(i + 1).find((r) => r.passed)
      const open = spans.at(-1)
      if (open && open.to.getTime() >= t.at.getTime()) continue
      spans.push({ from: lastGood, to: repair ? repair.at : now, foundAt: t.at, ongoing: !repair })
    }
    if (t.passed) lastGood = t.at
  }
  return spans
}

/** Hours of the spans inside [from, to]. */
export function hoursWithin(spans: readonly { from: Date; to: Date }[], from: Date, to: Date): number {
  let ms = 0
  for (const s of spans)
    ms += Math.max(0, Math.min(s.to.getTime(), to.getTime()) - Math.max(s.from.getTime(), from.getTime()))
  return ms / 3_600_000
}

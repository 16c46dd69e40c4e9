import { describe, expect, it } from 'vitest'
import { faultExposureSpans, hoursWithin } from '../../../shared/domain/fault-exposure.ts'

// Convention (common practice, no published source): without evidence of when a dangerous undetected failure
// occurred, it is assumed present since the function was last proven; it ends with the repair, proven by the next
// passing test. Expected hours are counted by hand from the dates below.
const d = (s: string) => new Date(`${s}T00:00:00Z`)
const commissioned = d('2025-01-01')
const now = d('2026-01-01')

describe('fault exposure', () => {
  it('runs from the last passing test to the repair', () => {
    const spans = faultExposureSpans(
      [
        { at: d('2025-03-01'), passed: true, dangerousAsFound: false },
        { at: d('2025-09-01'), passed: false, dangerousAsFound: true },
        { at: d('2025-09-03'), passed: true, dangerousAsFound: false },
      ],
      commissioned,
      now,
    )
    expect(spans).toEqual([{ from: d('2025-03-01'), to: d('2025-09-03'), foundAt: d('2025-09-01'), ongoing: false }])
    // 1 March to 3 September 2025: 31+30+31+30+31+31 days (Mar–Aug) + 2 = 186 days = 4 464 h
    expect(hoursWithin(spans, commissioned, now)).toBe(4464)
    // inside a period from 1 August: 33 days = 792 h
    expect(hoursWithin(spans, d('2025-08-01'), now)).toBe(792)
  })

  it('counts from commissioning when nothing passed before, and to now while not repaired', () => {
    const spans = faultExposureSpans(
      [{ at: d('2025-06-01'), passed: false, dangerousAsFound: true }],
      commissioned,
      now,
    )
    expect(spans).toEqual([{ from: commissioned, to: now, foundAt: d('2025-06-01'), ongoing: true }])
    expect(hoursWithin(spans, commissioned, now)).toBe(8760)
  })

  it('a second failure before the repair does not count twice; a safe failure opens no span', () => {
    const spans = faultExposureSpans(
      [
        { at: d('2025-02-01'), passed: true, dangerousAsFound: false },
        { at: d('2025-04-01'), passed: false, dangerousAsFound: true },
        { at: d('2025-04-02'), passed: false, dangerousAsFound: true },
        { at: d('2025-04-03'), passed: true, dangerousAsFound: false },
        { at: d('2025-05-01'), passed: false, dangerousAsFound: false },
      ],
      commissioned,
      now,
    )
    expect(spans).toHaveLength(1)
    // 1 February to 3 April 2025: 28 + 31 + 2 = 61 days = 1 464 h
    expect(hoursWithin(spans, commissioned, now)).toBe(1464)
  })
})

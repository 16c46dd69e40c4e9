import { describe, expect, it } from 'vitest'
import { dateText, dateTimeIn, todayIn } from '@/format'

// The screens' date texts (src/format.ts). Expected texts: the en-GB medium date of the Unicode CLDR ("d MMM y",
// abbreviated month "Feb"), with CET/CEST the short names of Central European time in that locale; 'YYYY-MM-DD' is
// the en-CA short date of CLDR (ISO 8601 order). Calling twice with other values checks that a kept formatter gives
// each call its own answer.
describe('date texts', () => {
  it('shows a calendar date as day, short month and year, the same on every call', () => {
    expect(dateText('2026-02-28')).toBe('28 Feb 2026')
    expect(dateText('2026-12-01T00:00:00Z')).toBe('1 Dec 2026')
    expect(dateText('2026-02-28')).toBe('28 Feb 2026')
    expect(dateText(null)).toBe('—')
  })

  it('shows an instant in each zone asked for, with the zone short name', () => {
    // 06:30 UTC on 4 May 2026 is 08:30 in Berlin (CEST, UTC+2); on 4 January, 07:30 (CET, UTC+1)
    expect(dateTimeIn('2026-05-04T06:30:00Z', 'Europe/Berlin')).toBe('4 May 2026, 08:30 CEST')
    expect(dateTimeIn('2026-05-04T06:30:00Z', 'UTC')).toBe('4 May 2026, 06:30 UTC')
    expect(dateTimeIn('2026-01-04T06:30:00Z', 'Europe/Berlin')).toBe('4 Jan 2026, 07:30 CET')
    expect(dateTimeIn('not a date', 'UTC')).toBe('not a date')
  })

  it("tells today's date in the zone, which may differ from UTC's", () => {
    const now = new Date('2026-05-04T23:30:00Z')
    // 01:30 on 5 May in Berlin (UTC+2), still 4 May in UTC
    expect(todayIn('Europe/Berlin', now)).toBe('2026-05-05')
    expect(todayIn(undefined, now)).toBe('2026-05-04')
  })
})

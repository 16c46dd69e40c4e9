import { describe, expect, it } from 'vitest'
import { dayIn, parseSiteTime, readHistoryRow, spansOverlap } from '../../../shared/domain/history-import.ts'

// The rows of a history file (docs/trip-tests.md#history-import). Times are read in the site's zone; the expected
// instants come from the IANA time zone database's rules for Europe/Berlin (CET = UTC+1 in winter, CEST = UTC+2 from
// the last Sunday of March; 2025-03-30 02:00 local does not exist) and America/Chicago (CST = UTC−6).

const berlin = { timeZone: 'Europe/Berlin', now: new Date('2025-06-01T10:00:00Z') }

describe('parseSiteTime', () => {
  it('reads a local time of the site in its zone', () => {
    expect(parseSiteTime('2025-01-15 08:30', 'Europe/Berlin')?.toISOString()).toBe('2025-01-15T07:30:00.000Z')
    expect(parseSiteTime('2025-07-15T08:30', 'Europe/Berlin')?.toISOString()).toBe('2025-07-15T06:30:00.000Z')
    expect(parseSiteTime('2025-01-15 08:30:15', 'America/Chicago')?.toISOString()).toBe('2025-01-15T14:30:15.000Z')
  })

  it('takes an instant with an offset as it is, and a bare date at the given local time', () => {
    expect(parseSiteTime('2025-01-15T08:30:00Z', 'Europe/Berlin')?.toISOString()).toBe('2025-01-15T08:30:00.000Z')
    expect(parseSiteTime('2025-01-15T08:30:00+05:00', 'Europe/Berlin')?.toISOString()).toBe('2025-01-15T03:30:00.000Z')
    expect(parseSiteTime('2025-01-15', 'Europe/Berlin', [12, 0])?.toISOString()).toBe('2025-01-15T11:00:00.000Z')
  })

  it.each(['2025-02-29', '2025-04-31 10:00', '2025-01-15 24:00', '15.01.2025', '2025-1-5', '', 'yesterday'])(
    'refuses "%s"',
    (text) => {
      expect(parseSiteTime(text, 'Europe/Berlin')).toBeNull()
    },
  )
})

describe('readHistoryRow', () => {
  it('reads a test row: its calendar day in the site zone, the result, as-found and as-left, the tester', () => {
    const r = readHistoryRow(
      {
        record: 'Test',
        tag: 'TSHH-101',
        date: '2025-03-04',
        result: 'PASS',
        asFound: '781.5',
        asLeft: '780',
        tester: 'R. Oakes',
      },
      berlin,
    )
    expect(r.problems).toEqual([])
    expect(r.record).toMatchObject({
      record: 'test',
      performedOn: '2025-03-04',
      passed: true,
      asFound: 781.5,
      asLeft: 780,
      tester: 'R. Oakes',
      method: null,
    })
    // a bare date is noon local: 2025-03-04 12:00 CET = 11:00 UTC
    expect(r.record?.record === 'test' && r.record.performedAt.toISOString()).toBe('2025-03-04T11:00:00.000Z')
  })

  it('reads fail as a failed test and names the method when given', () => {
    const r = readHistoryRow(
      { record: 'test', tag: 'T', date: '2025-03-04', result: 'fail', method: 'Reference gauge' },
      berlin,
    )
    expect(r.record).toMatchObject({ passed: false, method: 'reference_gauge' })
  })

  it('a test of today is taken no later than now', () => {
    // now is 08:00 UTC = 10:00 CEST, before noon local (10:00 UTC): the test is taken at now
    const r = readHistoryRow(
      { record: 'test', tag: 'T', date: '2025-06-01', result: 'pass' },
      { timeZone: 'Europe/Berlin', now: new Date('2025-06-01T08:00:00Z') },
    )
    expect(r.record?.record === 'test' && r.record.performedAt.toISOString()).toBe('2025-06-01T08:00:00.000Z')
  })

  it('refuses a test in the future, without a result, or with a comma decimal', () => {
    const r = readHistoryRow(
      { record: 'test', tag: 'T', date: '2025-06-02', result: 'maybe', asFound: '781,5' },
      berlin,
    )
    expect(r.record).toBeNull()
    expect(r.problems.map((p) => p.field).sort()).toEqual(['asFound', 'date', 'result'])
  })

  it('reads a commissioning row and refuses one in the future', () => {
    expect(readHistoryRow({ record: 'commissioning', tag: 'T', date: '2019-05-14' }, berlin).record).toMatchObject({
      record: 'commissioning',
      commissionedOn: '2019-05-14',
    })
    expect(readHistoryRow({ record: 'commissioning', tag: 'T', date: '2025-06-02' }, berlin).problems).toEqual([
      { field: 'date', message: 'Date: 2025-06-02 lies in the future' },
    ])
  })

  it('reads a past bypass and refuses an end before its start, an end in the future, a missing reason', () => {
    const ok = readHistoryRow(
      { record: 'bypass', tag: 'T', start: '2025-02-01 06:00', end: '2025-02-01 14:00', reason: 'Transmitter swap' },
      berlin,
    )
    expect(ok.problems).toEqual([])
    expect(ok.record?.record === 'bypass' && ok.record.start.toISOString()).toBe('2025-02-01T05:00:00.000Z')
    const bad = readHistoryRow(
      { record: 'bypass', tag: 'T', start: '2025-02-01 14:00', end: '2025-02-01 06:00', reason: '' },
      berlin,
    )
    expect(bad.problems.map((p) => p.field)).toEqual(['end', 'reason'])
    const open = readHistoryRow(
      { record: 'bypass', tag: 'T', start: '2025-05-01 06:00', end: '2025-07-01 06:00', reason: 'Works' },
      berlin,
    )
    expect(open.problems.map((p) => p.field)).toEqual(['end'])
  })

  it('refuses an unknown kind of record and a row without a tag', () => {
    const r = readHistoryRow({ record: 'calibration', tag: '' }, berlin)
    expect(r.problems.map((p) => p.field)).toEqual(['tag', 'record'])
  })
})

describe('spansOverlap and dayIn', () => {
  const span = (a: string, b: string) => ({ start: new Date(a), end: new Date(b) })
  it('spans that only touch do not overlap; nested ones do', () => {
    expect(
      spansOverlap(span('2025-01-01T00:00Z', '2025-01-02T00:00Z'), span('2025-01-02T00:00Z', '2025-01-03T00:00Z')),
    ).toBe(false)
    expect(
      spansOverlap(span('2025-01-01T00:00Z', '2025-01-05T00:00Z'), span('2025-01-02T00:00Z', '2025-01-03T00:00Z')),
    ).toBe(true)
  })
  it('the calendar day of an instant in the site zone', () => {
    // 23:30 UTC on 31 December is 00:30 on 1 January in Berlin (CET, UTC+1) and 17:30 on 31 December in Chicago
    expect(dayIn(new Date('2024-12-31T23:30:00Z'), 'Europe/Berlin')).toBe('2025-01-01')
    expect(dayIn(new Date('2024-12-31T23:30:00Z'), 'America/Chicago')).toBe('2024-12-31')
  })
})

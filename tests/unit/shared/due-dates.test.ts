import { describe, expect, it } from 'vitest'
import {
  computeDueDates,
  defaultGraceDays,
  dueSoonDays,
  intervalHours,
  maxGraceDays,
  type DueDateInput,
  type DueDateTest,
} from '../../../shared/domain/due-dates.ts'

const at = (iso: string): Date => new Date(iso)
const full = (iso: string, passed = true): DueDateTest => ({ performedAt: at(iso), kind: 'full', passed })
const partial = (iso: string, passed = true): DueDateTest => ({ performedAt: at(iso), kind: 'partial', passed })

function due(overrides: Partial<DueDateInput>) {
  return computeDueDates({
    testIntervalMonths: 12,
    testGraceDays: 30,
    tests: [],
    timeZone: 'UTC',
    now: at('2025-01-01T12:00:00Z'),
    ...overrides,
  })
}

describe('intervalHours', () => {
  // docs/domain/due-dates.md: 1 month = 730 h; 12 months = 8 760 h = 1 year and 3 months = 2 190 h as used in
  // IEC 61508-6 Annex B (1oo1 variants table)
  it.each([
    [1, 730],
    [3, 2190],
    [6, 4380],
    [12, 8760],
    [24, 17520],
  ])('%s months → %s h', (months, hours) => {
    expect(intervalHours(months)).toBe(hours)
  })
})

describe('defaultGraceDays', () => {
  // docs/domain/due-dates.md site policy (common practice): 0 under a code-set interval, else 10 % of the interval, at most 30 days;
  // our reading: interval at 730 h per month, rounded down to whole days (e.g. 6 months = 4 380 h → 438 h = 18.25 d → 18)
  it.each<[number, boolean, number]>([
    [0.5, false, 1], // 1.52 days: rounded down, not to nearest (for whole months below 12 both agree)
    [1, false, 3],
    [3, false, 9],
    [6, false, 18],
    [9, false, 27],
    [10, false, 30],
    [12, false, 30],
    [48, false, 30],
    [12, true, 0],
    [1, true, 0],
  ])('%s months, code-set %s → %s days', (months, codeSet, days) => {
    expect(defaultGraceDays(months, codeSet)).toBe(days)
  })

  it.each([0, -1, Number.NaN])('rejects an interval of %s months', (months) => {
    expect(() => defaultGraceDays(months, false)).toThrow(RangeError)
  })

  it('is used when testGraceDays is null', () => {
    expect(due({ testGraceDays: null, testIntervalMonths: 6 }).graceDays).toBe(18)
    expect(due({ testGraceDays: null, testIntervalMonths: 12, codeSetInterval: true }).graceDays).toBe(0)
    expect(due({ testGraceDays: 5 }).graceDays).toBe(5)
  })
})

describe('computeDueDates: calendar months with month-end clamping', () => {
  // Check values: interval bookkeeping by calendar months with month-end clamping (common practice; the dates counted on a calendar);
  // the 2024-01-31 row follows from the same clamping rule (computed here by hand: 2024 is a leap year).
  it.each<[string, number, string]>([
    ['2024-03-15', 12, '2025-03-15'],
    ['2024-08-31', 6, '2025-02-28'],
    ['2024-02-29', 12, '2025-02-28'],
    ['2024-02-29', 24, '2026-02-28'],
    ['2025-01-31', 1, '2025-02-28'],
    ['2023-10-31', 36, '2026-10-31'],
    ['2024-01-31', 1, '2024-02-29'],
    ['2024-02-29', 48, '2028-02-29'],
  ])('last pass %s + %s months → due %s', (day, months, expected) => {
    const r = due({ testIntervalMonths: months, tests: [full(`${day}T12:00:00Z`)], now: at(`${day}T13:00:00Z`) })
    expect(r.lastFullPass).toBe(day)
    expect(r.dueDate).toBe(expected)
  })
})

describe('computeDueDates: status', () => {
  // docs/domain/due-dates.md: overdue when today > due date + grace; due_soon = due within 30 days (site convention, common practice).
  // Last pass 2024-03-15, 12 months → due 2025-03-15; grace 30 → grace end 2025-04-14.
  const tests = [full('2024-03-15T09:00:00Z')]
  it.each<[number, string, string, number]>([
    [30, '2025-02-12', 'ok', 31],
    [30, '2025-02-13', 'due_soon', 30],
    [30, '2025-03-15', 'due_soon', 0],
    [30, '2025-03-16', 'in_grace', -1],
    [30, '2025-04-14', 'in_grace', -30],
    [30, '2025-04-15', 'overdue', -31],
    [0, '2025-03-15', 'due_soon', 0],
    [0, '2025-03-16', 'overdue', -1],
  ])('grace %s, today %s → %s (%s days to due)', (grace, today, status, days) => {
    const r = due({ testGraceDays: grace, tests, now: at(`${today}T12:00:00Z`) })
    expect(r.status).toBe(status)
    expect(r.daysUntilDue).toBe(days)
    expect(r.today).toBe(today)
  })

  it('reports the grace end', () => {
    expect(due({ tests, now: at('2025-01-01T00:00:00Z') }).graceEnd).toBe('2025-04-14')
    expect(due({ tests, testGraceDays: 0, now: at('2025-01-01T00:00:00Z') }).graceEnd).toBe('2025-03-15')
  })

  it.each<[string, DueDateTest[]]>([
    ['no tests at all', []],
    ['only failed full tests', [full('2024-05-01T08:00:00Z', false)]],
    ['only partial tests', [partial('2024-05-01T08:00:00Z')]],
    ['a passing full test dated after now', [full('2025-06-01T08:00:00Z')]],
  ])('%s → never_tested', (_name, list) => {
    const r = due({ tests: list })
    expect(r).toMatchObject({
      status: 'never_tested',
      lastFullPass: null,
      dueDate: null,
      graceEnd: null,
      daysUntilDue: null,
    })
  })
})

describe('computeDueDates: history rules', () => {
  // docs/domain/due-dates.md: due date counts from the last completed full test that passed; after a failure it counts from the
  // passing retest; partial tests never move the full-test due date.
  it('ignores partial tests, passed or not', () => {
    const r = due({
      tests: [full('2024-03-15T09:00:00Z'), partial('2024-12-01T09:00:00Z'), partial('2025-01-02T09:00:00Z', false)],
      now: at('2025-01-10T12:00:00Z'),
    })
    expect(r.lastFullPass).toBe('2024-03-15')
    expect(r.dueDate).toBe('2025-03-15')
  })

  it('keeps counting from the last pass after a failed full test', () => {
    const r = due({
      tests: [full('2024-03-15T09:00:00Z'), full('2025-03-01T09:00:00Z', false)],
      now: at('2025-03-20T12:00:00Z'),
    })
    expect(r.lastFullPass).toBe('2024-03-15')
    expect(r.status).toBe('in_grace')
  })

  it('counts from the passing retest after a failure', () => {
    const r = due({
      tests: [full('2025-03-10T09:00:00Z'), full('2024-03-15T09:00:00Z'), full('2025-03-01T09:00:00Z', false)],
      now: at('2025-03-20T12:00:00Z'),
    })
    expect(r.lastFullPass).toBe('2025-03-10')
    expect(r.dueDate).toBe('2026-03-10')
    expect(r.status).toBe('ok')
    expect(r.lateTests).toEqual([])
  })

  it('orders same-day tests by time: fail then pass counts as passed that day', () => {
    const failThenPass = due({
      tests: [full('2024-06-01T10:00:00Z'), full('2024-06-01T08:00:00Z', false)],
      now: at('2024-06-02T00:00:00Z'),
    })
    expect(failThenPass.lastFullPass).toBe('2024-06-01')
    const passThenFail = due({
      tests: [full('2024-06-01T08:00:00Z'), full('2024-06-01T10:00:00Z', false)],
      now: at('2024-06-02T00:00:00Z'),
    })
    expect(passThenFail.lastFullPass).toBe('2024-06-01')
  })

  // docs/domain/due-dates.md: a test done inside the grace period is reported as late; the next due date counts from the late
  // test (common practice: a late test shifts the next due date).
  // Due 2025-03-15, grace 30 → grace end 2025-04-14.
  it.each<[string, boolean, number | null, boolean | null]>([
    ['2025-03-15', false, null, null],
    ['2025-03-16', true, 1, true],
    ['2025-04-14', true, 30, true],
    ['2025-04-15', true, 31, false],
  ])('full test on %s: late %s (days late %s, within grace %s)', (day, late, daysLate, withinGrace) => {
    const r = due({ tests: [full('2024-03-15T09:00:00Z'), full(`${day}T09:00:00Z`)], now: at('2025-05-01T12:00:00Z') })
    expect(r.lastFullPass).toBe(day)
    expect(r.lateTests).toHaveLength(late ? 1 : 0)
    if (late) {
      expect(r.lateTests[0]).toMatchObject({
        performedOn: day,
        dueDate: '2025-03-15',
        graceEnd: '2025-04-14',
        daysLate,
        withinGrace,
      })
    }
  })

  it('reports a late failed test and its late retest against the same due date', () => {
    const r = due({
      tests: [full('2024-03-15T09:00:00Z'), full('2025-03-20T09:00:00Z', false), full('2025-03-25T09:00:00Z')],
      now: at('2025-05-01T12:00:00Z'),
    })
    expect(r.lateTests.map((t) => [t.performedOn, t.passed, t.dueDate])).toEqual([
      ['2025-03-20', false, '2025-03-15'],
      ['2025-03-25', true, '2025-03-15'],
    ])
    expect(r.dueDate).toBe('2026-03-25')
  })

  it('never reports partial tests as late', () => {
    const r = due({
      tests: [full('2024-03-15T09:00:00Z'), partial('2025-03-20T09:00:00Z')],
      now: at('2025-03-21T12:00:00Z'),
    })
    expect(r.lateTests).toEqual([])
  })

  it('carries the test id into the late list', () => {
    const r = due({
      tests: [full('2024-03-15T09:00:00Z'), { ...full('2025-03-20T09:00:00Z'), id: 'T-7' }],
      now: at('2025-03-21T12:00:00Z'),
    })
    expect(r.lateTests[0].id).toBe('T-7')
  })
})

describe('computeDueDates: time zones', () => {
  // docs/domain/due-dates.md: due dates are calendar dates in the site's zone. 2025-01-31T23:30Z is 2025-02-01 00:30 CET in Berlin
  // (UTC+1 in winter), 18:30 EST on 2025-01-31 in New York (UTC−5).
  it.each<[string, string, string]>([
    ['UTC', '2025-01-31', '2025-02-28'],
    ['Europe/Berlin', '2025-02-01', '2025-03-01'],
    ['America/New_York', '2025-01-31', '2025-02-28'],
  ])('a test at 2025-01-31T23:30Z in %s is dated %s, due %s', (timeZone, day, dueDate) => {
    const r = due({
      testIntervalMonths: 1,
      timeZone,
      tests: [full('2025-01-31T23:30:00Z')],
      now: at('2025-02-10T12:00:00Z'),
    })
    expect(r.lastFullPass).toBe(day)
    expect(r.dueDate).toBe(dueDate)
  })

  it('takes today in the site zone: 23:00Z on the due date is already the next day in Berlin (CET)', () => {
    const base = {
      testIntervalMonths: 12,
      testGraceDays: 5,
      timeZone: 'Europe/Berlin',
      tests: [full('2024-03-15T09:00:00Z')],
    }
    expect(due({ ...base, now: at('2025-03-15T22:59:59Z') })).toMatchObject({
      today: '2025-03-15',
      status: 'due_soon',
      daysUntilDue: 0,
    })
    expect(due({ ...base, now: at('2025-03-15T23:00:00Z') })).toMatchObject({
      today: '2025-03-16',
      status: 'in_grace',
      daysUntilDue: -1,
    })
  })

  it('counts calendar days across a daylight-saving change (Berlin, 2025-03-30)', () => {
    // last pass 2025-02-28 + 1 month = 2025-03-28; from today 2025-03-27 (CET) that is 1 day; no 23-hour day counts short
    const r = due({
      testIntervalMonths: 1,
      timeZone: 'Europe/Berlin',
      tests: [full('2025-02-28T10:00:00Z')],
      now: at('2025-03-27T12:00:00Z'),
    })
    expect(r.daysUntilDue).toBe(1)
    const after = due({
      testIntervalMonths: 1,
      testGraceDays: 3,
      timeZone: 'Europe/Berlin',
      tests: [full('2025-02-28T10:00:00Z')],
      now: at('2025-03-31T21:59:00Z'),
    })
    expect(after).toMatchObject({ today: '2025-03-31', graceEnd: '2025-03-31', status: 'in_grace', daysUntilDue: -3 })
    const next = due({
      testIntervalMonths: 1,
      testGraceDays: 3,
      timeZone: 'Europe/Berlin',
      tests: [full('2025-02-28T10:00:00Z')],
      now: at('2025-03-31T22:00:00Z'),
    })
    expect(next).toMatchObject({ today: '2025-04-01', status: 'overdue' })
  })
})

describe('computeDueDates: input checks', () => {
  it.each<[string, Partial<DueDateInput>]>([
    ['interval 0', { testIntervalMonths: 0 }],
    ['fractional interval', { testIntervalMonths: 1.5 }],
    ['negative grace', { testGraceDays: -1 }],
    ['fractional grace', { testGraceDays: 2.5 }],
    ['unknown time zone', { timeZone: 'Mars/Olympus_Mons' }],
  ])('rejects %s', (_name, overrides) => {
    expect(() => due(overrides)).toThrow(RangeError)
  })
})

describe('dueSoonDays: the look-ahead scales with short intervals (common practice, no standard behind the numbers)', () => {
  // a quarter of the interval at 730 h per month (30.42 days), rounded down, at most 30 days
  it.each([
    [1, 7], // 30.42 / 4 = 7.6
    [2, 15], // 60.83 / 4 = 15.2
    [3, 22], // 91.25 / 4 = 22.8
    [4, 30], // 121.7 / 4 = 30.4 → 30
    [12, 30],
  ])('%s months → %s days', (months, days) => {
    expect(dueSoonDays(months)).toBe(days)
  })
  it('a monthly test is not due soon the day it passed, and is 7 days before its due date', () => {
    const t = [full('2025-01-01T10:00:00Z')]
    expect(due({ testIntervalMonths: 1, testGraceDays: 0, tests: t, now: at('2025-01-02T10:00:00Z') }).status).toBe(
      'ok',
    )
    // due 1 February: on 24 January 8 days ahead (ok), on 25 January 7 days ahead (due soon)
    expect(due({ testIntervalMonths: 1, testGraceDays: 0, tests: t, now: at('2025-01-24T10:00:00Z') }).status).toBe(
      'ok',
    )
    expect(due({ testIntervalMonths: 1, testGraceDays: 0, tests: t, now: at('2025-01-25T10:00:00Z') }).status).toBe(
      'due_soon',
    )
  })
})

describe('maxGraceDays: no grace beyond half the interval (common practice)', () => {
  it.each([
    [1, 15], // 30.42 / 2 = 15.2
    [3, 45], // 91.25 / 2
    [12, 182], // 365 / 2 = 182.5
  ])('%s months → %s days', (months, days) => {
    expect(maxGraceDays(months)).toBe(days)
  })
  it('bounds a limit grace given above it', () => {
    const r = due({ testIntervalMonths: 1, testGraceDays: 40, tests: [full('2025-01-01T10:00:00Z')] })
    expect(r.graceDays).toBe(15)
    expect(r.graceEnd).toBe('2025-02-16')
  })
})

describe('computeDueDates: an approved deferral moves the due date while it is valid', () => {
  const tests = [full('2024-03-10T10:00:00Z')]
  const deferral = { originalDueDate: '2025-03-10', newDueDate: '2025-04-20' }
  it('moves the due date, with no grace past the deferred date', () => {
    const r = due({ tests, deferral, testGraceDays: 30, now: at('2025-04-01T12:00:00Z') })
    expect(r).toMatchObject({ dueDate: '2025-04-20', graceEnd: '2025-04-20', status: 'due_soon' })
    expect(r.deferredFrom).toBe('2025-03-10')
    // the day after the deferred date it is overdue, although 30 days of grace would have run to 9 April only
    expect(due({ tests, deferral, testGraceDays: 30, now: at('2025-04-21T12:00:00Z') }).status).toBe('overdue')
  })
  it('stops applying once a passing full test moved the due date', () => {
    const r = due({ tests: [...tests, full('2025-03-20T10:00:00Z')], deferral, now: at('2025-04-01T12:00:00Z') })
    expect(r).toMatchObject({ dueDate: '2026-03-20', deferredFrom: null, status: 'ok' })
  })
  it('does not apply to a due date it was not asked for', () => {
    const r = due({ tests, deferral: { originalDueDate: '2025-03-11', newDueDate: '2025-04-20' } })
    expect(r).toMatchObject({ dueDate: '2025-03-10', deferredFrom: null })
  })
})

describe('statusChangesOn: the day the calendar alone changes the status', () => {
  // Dates worked by hand from the rules in docs/domain/due-dates.md (12-month interval, 30 grace days, due soon
  // 30 days before the due date): last pass 2024-03-10 → due 2025-03-10, due soon from 2025-02-08, in grace from
  // 2025-03-11, overdue from 2025-04-10 (2025-03-10 + 30 days = 2025-04-09 is the last day of grace).
  const tests = [full('2024-03-10T09:00:00Z')]
  it.each([
    ['2025-01-01T12:00:00Z', 'ok', '2025-02-08'],
    ['2025-02-07T12:00:00Z', 'ok', '2025-02-08'],
    ['2025-02-08T12:00:00Z', 'due_soon', '2025-03-11'],
    ['2025-03-10T12:00:00Z', 'due_soon', '2025-03-11'],
    ['2025-03-11T12:00:00Z', 'in_grace', '2025-04-10'],
    ['2025-04-09T12:00:00Z', 'in_grace', '2025-04-10'],
    ['2025-04-10T12:00:00Z', 'overdue', null],
  ])('at %s the status is %s and next changes on %s', (now, status, changesOn) => {
    const r = due({ tests, now: at(now) })
    expect(r.status).toBe(status)
    expect(r.statusChangesOn).toBe(changesOn)
  })

  it('is the status of the day it names: the day before, the old status; on the day, the next one', () => {
    // 3-month interval, grace 9 days: last pass 2025-01-15 → due 2025-04-15; due soon 22 days before (a quarter of
    // 91.25 days, rounded down) → 2025-03-24; grace end 2025-04-24 (hand-worked from docs/domain/due-dates.md)
    const input = { testIntervalMonths: 3, testGraceDays: 9, tests: [full('2025-01-15T08:00:00Z')] }
    expect(due({ ...input, now: at('2025-03-23T23:00:00Z') })).toMatchObject({
      status: 'ok',
      statusChangesOn: '2025-03-24',
    })
    expect(due({ ...input, now: at('2025-03-24T00:30:00Z') }).status).toBe('due_soon')
    expect(due({ ...input, now: at('2025-04-16T00:30:00Z') })).toMatchObject({
      status: 'in_grace',
      statusChangesOn: '2025-04-25',
    })
    expect(due({ ...input, now: at('2025-04-25T00:30:00Z') }).status).toBe('overdue')
  })

  it('without grace a due-soon limit goes straight to overdue the day after its due date', () => {
    const r = due({ testGraceDays: 0, tests, now: at('2025-03-01T12:00:00Z') })
    expect(r).toMatchObject({ status: 'due_soon', statusChangesOn: '2025-03-11' })
    expect(due({ testGraceDays: 0, tests, now: at('2025-03-11T12:00:00Z') }).status).toBe('overdue')
  })

  it('a never-tested limit has no calendar change: only a test changes it', () => {
    expect(due({ tests: [] })).toMatchObject({ status: 'never_tested', statusChangesOn: null })
  })
})

describe('computeDueDates from the commissioning date', () => {
  // IEC 61511-1:2016 §15 (SIS safety validation) proves the function at commissioning and §16.3 (proof testing)
  // repeats the proof at the test interval (both from memory, not checked against the text); the product's reading
  // (docs/domain/due-dates.md#never-tested): without a passing full test the first test falls due one interval after
  // commissioning. Expected dates by hand, calendar months: 2024-03-15 + 12 months = 2025-03-15.
  const commissioned = (now: string, over: Partial<DueDateInput> = {}) =>
    due({ commissionedOn: '2024-03-15', now: at(now), ...over })

  it('without a commissioning date a limit with no passing test is never tested, with no due date', () => {
    const r = due({ now: at('2024-06-01T12:00:00Z') })
    expect(r.status).toBe('never_tested')
    expect(r.dueDate).toBeNull()
  })

  it('inside the first interval it is ok, due an interval after commissioning, with no last pass', () => {
    const r = commissioned('2024-06-01T12:00:00Z')
    expect(r.status).toBe('ok')
    expect(r.dueDate).toBe('2025-03-15')
    expect(r.lastFullPass).toBeNull()
    // 30 days of look-ahead before 2025-03-15 (dueSoonDays(12) = 30): 2025-02-13
    expect(r.statusChangesOn).toBe('2025-02-13')
  })

  it('due soon, then in grace, then never tested once the first due date and its grace have passed', () => {
    expect(commissioned('2025-03-01T12:00:00Z').status).toBe('due_soon')
    // grace 30 days: 2025-03-15 + 30 days = 2025-04-14 is the last day of grace
    const grace = commissioned('2025-04-14T12:00:00Z')
    expect(grace.status).toBe('in_grace')
    expect(grace.graceEnd).toBe('2025-04-14')
    expect(grace.statusChangesOn).toBe('2025-04-15')
    const late = commissioned('2025-04-15T12:00:00Z')
    expect(late.status).toBe('never_tested')
    expect(late.dueDate).toBe('2025-03-15')
    expect(late.daysUntilDue).toBe(-31)
    expect(late.statusChangesOn).toBeNull()
  })

  it('a passing full test after commissioning takes over: due an interval after the test', () => {
    const r = commissioned('2025-06-01T12:00:00Z', { tests: [full('2025-02-10T09:00:00Z')] })
    expect(r.status).toBe('ok')
    expect(r.lastFullPass).toBe('2025-02-10')
    expect(r.dueDate).toBe('2026-02-10')
  })

  it('a failed test alone does not end "never tested": the first interval still runs from commissioning', () => {
    const r = commissioned('2025-06-01T12:00:00Z', { tests: [full('2025-02-10T09:00:00Z', false)] })
    expect(r.status).toBe('never_tested')
    expect(r.dueDate).toBe('2025-03-15')
  })
})

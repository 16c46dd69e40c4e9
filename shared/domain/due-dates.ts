// Full-test due dates of a limit. Rules, edges and sources: docs/domain/due-dates.md.
import { TZDate } from '@date-fns/tz'
import { UTCDate } from '@date-fns/utc'
import { addDays, addMonths, differenceInCalendarDays, format } from 'date-fns'

/** Hours in one month for reliability figures (1 month = 730 h, i.e. 8 760 h / 12; docs/domain/due-dates.md). */
export const HOURS_PER_MONTH = 730

/** Longest "due soon" look-ahead, days (site convention); shorter for short intervals, see dueSoonDays. */
export const DUE_SOON_DAYS = 30

/** Longest default grace period, days (docs/domain/due-dates.md). */
export const MAX_DEFAULT_GRACE_DAYS = 30

/** Days in an interval of whole months at 730 h per month (a month is 30.4 days). */
function intervalDays(months: number): number {
  return (months * HOURS_PER_MONTH) / 24
}

/**
 * The "due soon" look-ahead of an interval: a quarter of the interval, at most DUE_SOON_DAYS (30). A monthly test is
 * due soon in its last 7 days, not from the day it passed; a quarterly one in its last 22 days; from four months up
 * the full 30 days. Common practice, no standard behind the numbers (docs/domain/due-dates.md).
 */
export function dueSoonDays(intervalMonths: number): number {
  if (!(intervalMonths > 0)) throw new RangeError('test interval must be a positive number of months')
  return Math.min(DUE_SOON_DAYS, Math.floor(intervalDays(intervalMonths) / 4))
}

/**
 * The longest grace period any policy may give an interval: half of it, rounded down to whole days. A grace longer
 * than half the interval would let a test slip by most of a cycle without anyone deciding so (common practice;
 * docs/domain/due-dates.md).
 */
export function maxGraceDays(intervalMonths: number): number {
  if (!(intervalMonths > 0)) throw new RangeError('test interval must be a positive number of months')
  return Math.floor(intervalDays(intervalMonths) / 2)
}

/** A recorded trip test, as far as due dates are concerned. */
export interface DueDateTest {
  id?: string | number
  performedAt: Date
  kind: 'full' | 'partial'
  /** As-left in tolerance and as-found neither out_dangerous nor no_trip. */
  passed: boolean
}

/** Everything the due-date computation needs; `now` included. */
export interface DueDateInput {
  testIntervalMonths: number
  /** null: site-policy default, see defaultGraceDays */
  testGraceDays: number | null
  /** The interval is set by a code (e.g. an annual furnace-interlock test): default grace 0. */
  codeSetInterval?: boolean
  tests: DueDateTest[]
  /**
   * An approved test deferral: it moves the due date from originalDueDate to newDueDate while it is valid, that is
   * while the due date computed from the tests is still originalDueDate. No grace runs past a deferred date.
   */
  deferral?: { originalDueDate: string; newDueDate: string } | null
  /**
   * The limit's commissioning (validation) date, 'YYYY-MM-DD', or null. Without a passing full test the first test
   * falls due an interval after it, and "never tested" counts from it (docs/domain/due-dates.md#never-tested).
   */
  commissionedOn?: string | null
  /** IANA zone of the site, e.g. 'Europe/Berlin'. */
  timeZone: string
  now: Date
}

/** Test-status of a limit. */
export type TestDueStatus = 'never_tested' | 'ok' | 'due_soon' | 'in_grace' | 'overdue'

/** A full test done after the due date that was in force when it was performed. */
export interface LateTest {
  id?: string | number
  performedAt: Date
  performedOn: string
  passed: boolean
  dueDate: string
  graceEnd: string
  daysLate: number
  /** true: inside the grace period ("late"); false: after it (the limit was overdue). */
  withinGrace: boolean
}

/** Due-date figures of one limit; dates are 'YYYY-MM-DD' calendar dates in the site's time zone. */
export interface DueDateResult {
  lastFullPass: string | null
  dueDate: string | null
  graceEnd: string | null
  graceDays: number
  today: string
  status: TestDueStatus
  /**
   * Calendar days from today to the due date; negative once past;
   * null without a passing full test or commissioning date.
   */
  daysUntilDue: number | null
  lateTests: LateTest[]
  /** The due date without the deferral, when an approved deferral moved it; else null. */
  deferredFrom: string | null
  /**
   * The first calendar day on which the status changes by the calendar alone (no new test, deferral or edit):
   * ok → due_soon on dueDate − dueSoonDays, due_soon → in_grace (or overdue without grace) the day after dueDate,
   * in_grace → overdue the day after graceEnd; null for never_tested and overdue, which the calendar does not change.
   * The schedule job refreshes only limits whose day has come (docs/domain/due-dates.md).
   */
  statusChangesOn: string | null
}

/** Proof-test interval in hours for reliability figures (1 month = 730 h). */
export function intervalHours(months: number): number {
  return months * HOURS_PER_MONTH
}

/**
 * Site-policy default grace period (docs/domain/due-dates.md): 0 for a code-set interval, else 10 % of the interval,
 * at most 30 days; the interval is taken at 730 h per month and the result rounded down to whole days.
 */
export function defaultGraceDays(intervalMonths: number, codeSet: boolean): number {
  if (!(intervalMonths > 0)) throw new RangeError('test interval must be a positive number of months')
  if (codeSet) return 0
  // 10 % of months × 730 h, in days: months × 73 / 24
  return Math.min(MAX_DEFAULT_GRACE_DAYS, Math.floor((intervalMonths * 73) / 24))
}

// zones already checked: building an Intl.DateTimeFormat costs most of a millisecond
const knownZones = new Set<string>()

function checkTimeZone(timeZone: string): void {
  if (knownZones.has(timeZone)) return
  try {
    Intl.DateTimeFormat('en-US', { timeZone })
  } catch {
    throw new RangeError(`unknown time zone: ${timeZone}`)
  }
  knownZones.add(timeZone)
}

/** The calendar date of an instant in a zone, as a zone-free (UTC) calendar day for arithmetic. */
function calendarDay(instant: Date, timeZone: string): UTCDate {
  const local = new TZDate(instant.getTime(), timeZone)
  return new UTCDate(local.getFullYear(), local.getMonth(), local.getDate())
}

const iso = (day: UTCDate): string => format(day, 'yyyy-MM-dd')

function parseDay(date: string): UTCDate {
  const m = /^(\d{4})-(\d{2})-(\d{2})$/.exec(date)
  if (!m) throw new RangeError(`not a calendar date: ${date}`)
  return new UTCDate(Number(m[1]), Number(m[2]) - 1, Number(m[3]))
}

/** Computes the full-test due date, grace end, status and late tests of a limit (pure; `now` is an input). */
export function computeDueDates(input: DueDateInput): DueDateResult {
  const { testIntervalMonths: months, timeZone } = input
  if (!Number.isInteger(months) || months < 1)
    throw new RangeError('test interval must be a whole number of months ≥ 1')
  if (input.testGraceDays !== null && (!Number.isInteger(input.testGraceDays) || input.testGraceDays < 0)) {
    throw new RangeError('grace days must be a whole number ≥ 0')
  }
  checkTimeZone(timeZone)
  const graceDays = Math.min(
    maxGraceDays(months),
    input.testGraceDays ?? defaultGraceDays(months, input.codeSetInterval ?? false),
  )
  const today = calendarDay(input.now, timeZone)

  // full tests up to now, oldest first; tests recorded with a future time are ignored
  const fullTests = input.tests
    .filter((t) => t.kind === 'full' && t.performedAt.getTime() <= input.now.getTime())
    .sort((a, b) => a.performedAt.getTime() - b.performedAt.getTime())

  let lastPass: UTCDate | null = null
  const lateTests: LateTest[] = []
  for (const t of fullTests) {
    const day = calendarDay(t.performedAt, timeZone)
    if (lastPass !== null) {
      const due = addMonths(lastPass, months)
      const graceEnd = addDays(due, graceDays)
      const daysLate = differenceInCalendarDays(day, due)
      if (daysLate > 0) {
        lateTests.push({
          ...(t.id === undefined ? {} : { id: t.id }),
          performedAt: t.performedAt,
          performedOn: iso(day),
          passed: t.passed,
          dueDate: iso(due),
          graceEnd: iso(graceEnd),
          daysLate,
          withinGrace: differenceInCalendarDays(day, graceEnd) <= 0,
        })
      }
    }
    if (t.passed) lastPass = day
  }

  // without a passing full test, the commissioning (validation) date starts the first interval
  const commissioned = input.commissionedOn ? parseDay(input.commissionedOn) : null
  const anchor = lastPass ?? commissioned
  if (anchor === null) {
    return {
      lastFullPass: null,
      dueDate: null,
      graceEnd: null,
      graceDays,
      today: iso(today),
      status: 'never_tested',
      daysUntilDue: null,
      lateTests,
      deferredFrom: null,
      statusChangesOn: null,
    }
  }

  const computedDue = addMonths(anchor, months)
  const deferral = input.deferral ?? null
  const deferred = deferral !== null && deferral.originalDueDate === iso(computedDue)
  const due = deferred ? parseDay(deferral.newDueDate) : computedDue
  const graceEnd = deferred ? due : addDays(due, graceDays)
  const daysUntilDue = differenceInCalendarDays(due, today)
  const daysUntilGraceEnd = differenceInCalendarDays(graceEnd, today)
  // past its first due date and grace with no passing test, a commissioned limit is still "never tested" (which
  // counts as overdue everywhere, shared/domain/rules/trip-tests.ts)
  const status: TestDueStatus =
    daysUntilGraceEnd < 0
      ? lastPass === null
        ? 'never_tested'
        : 'overdue'
      : daysUntilDue < 0
        ? 'in_grace'
        : daysUntilDue <= dueSoonDays(months)
          ? 'due_soon'
          : 'ok'

  return {
    lastFullPass: lastPass === null ? null : iso(lastPass),
    dueDate: iso(due),
    graceEnd: iso(graceEnd),
    graceDays,
    today: iso(today),
    status,
    daysUntilDue,
    lateTests,
    deferredFrom: deferred ? iso(computedDue) : null,
    statusChangesOn:
      status === 'ok'
        ? iso(addDays(due, -dueSoonDays(months)))
        : status === 'due_soon'
          ? iso(addDays(due, 1))
          : status === 'in_grace'
            ? iso(addDays(graceEnd, 1))
            : null,
  }
}

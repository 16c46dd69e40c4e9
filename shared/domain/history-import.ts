// The rows of a history file (shared/schemas/history-import.ts) as records: what each kind of record needs, how its
// dates and times are read in the site's time zone, and the checks that need no database (dates not in the future,
// a bypass ending after it starts, a result of pass or fail). docs/trip-tests.md#history-import.
import { TZDate } from '@date-fns/tz'
import {
  HISTORY_RECORD_KINDS,
  HISTORY_TEST_METHODS,
  type HistoryColumnKey,
  type HistoryRecordKind,
} from '../schemas/history-import.ts'

export type HistoryCells = Partial<Record<HistoryColumnKey, string>>

/** A problem of one cell (`field` is the column key) or of the whole row (`_row`). */
export interface HistoryProblem {
  field: string
  message: string
}

export interface ImportedTest {
  record: 'test'
  tag: string
  performedAt: Date
  /** the calendar day of the test in the site's time zone */
  performedOn: string
  passed: boolean
  asFound: number | null
  asLeft: number | null
  method: (typeof HISTORY_TEST_METHODS)[number] | null
  tester: string
  notes: string
}
export interface ImportedCommissioning {
  record: 'commissioning'
  tag: string
  /** 'YYYY-MM-DD' */
  commissionedOn: string
  notes: string
}
export interface ImportedBypass {
  record: 'bypass'
  tag: string
  start: Date
  end: Date
  reason: string
  notes: string
}
export type HistoryRecord = ImportedTest | ImportedCommissioning | ImportedBypass

const DATE = /^(\d{4})-(\d{2})-(\d{2})$/
const DATE_TIME = /^(\d{4})-(\d{2})-(\d{2})[T ](\d{2}):(\d{2})(?::(\d{2}))?$/
const WITH_OFFSET = /^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}(:\d{2}(\.\d{1,3})?)?(Z|[+-]\d{2}:\d{2})$/

/** A real calendar day (no 31 April, no 29 February outside leap years). */
function realDay(y: number, m: number, d: number): boolean {
  const t = new Date(Date.UTC(y, m - 1, d))
  return t.getUTCFullYear() === y && t.getUTCMonth() === m - 1 && t.getUTCDate() === d
}

/** The calendar day of an instant in a time zone, 'YYYY-MM-DD'. */
export function dayIn(instant: Date, timeZone: string): string {
  const t = new TZDate(instant.getTime(), timeZone)
  return `${t.getFullYear()}-${String(t.getMonth() + 1).padStart(2, '0')}-${String(t.getDate()).padStart(2, '0')}`
}

/** A calendar day written 'YYYY-MM-DD', or null. */
export function parseDay(text: string): string | null {
  const m = DATE.exec(text)
  if (!m || !realDay(Number(m[1]), Number(m[2]), Number(m[3]))) return null
  return text
}

/**
 * A time as a history file writes it, in the site's time zone: 'YYYY-MM-DD HH:MM[:SS]' (or with a 'T') is a local
 * time of the site; with 'Z' or an offset it is that instant; a bare date is `dayTime` on that day (local). Null
 * when the text is none of these or names a day or time that does not exist.
 */
export function parseSiteTime(text: string, timeZone: string, dayTime: [number, number] = [0, 0]): Date | null {
  if (WITH_OFFSET.test(text)) {
    const t = new Date(text)
    return Number.isNaN(t.getTime()) || !parseDay(text.slice(0, 10)) ? null : t
  }
  const d = DATE.exec(text)
  const dt = DATE_TIME.exec(text)
  const parts = d ? [d[1], d[2], d[3], String(dayTime[0]), String(dayTime[1]), '0'] : dt ? dt.slice(1, 7) : null
  if (!parts) return null
  const [y, mo, day, h, mi, s] = parts.map((p) => Number(p ?? 0))
  if (!realDay(y, mo, day) || h > 23 || mi > 59 || s > 59) return null
  return new Date(new TZDate(y, mo - 1, day, h, mi, s, timeZone).getTime())
}

const NUMBER = /^[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$/

const PASS = new Set(['pass', 'passed', 'ok', 'good', 'p'])
const FAIL = new Set(['fail', 'failed', 'f', 'not ok', 'bad'])

/** Where the same text limits apply as in the product's own forms. */
const MAX_TEXT = 2000

/**
 * Reads one row of a history file into a record, or lists its problems. Checks what needs no database: the kind of
 * record and the cells it needs, dates and times (not in the future, a bypass's end after its start), the result,
 * numbers and the method. The limit tag's existence and duplicates are the server's to check.
 */
export function readHistoryRow(
  cells: HistoryCells,
  at: { timeZone: string; now: Date },
): { record: HistoryRecord; problems: [] } | { record: null; problems: HistoryProblem[] } {
  const problems: HistoryProblem[] = []
  const add = (field: string, message: string) => problems.push({ field, message })
  const text = (k: HistoryColumnKey) => (cells[k] ?? '').trim()
  const kind = text('record').toLowerCase() as HistoryRecordKind
  const tag = text('tag')
  if (!tag) add('tag', 'Limit tag: the row names no limit')
  for (const k of ['tester', 'reason', 'notes'] as const)
    if (text(k).length > MAX_TEXT) add(k, `${k}: at most ${MAX_TEXT} characters`)
  const notes = text('notes')
  const today = dayIn(at.now, at.timeZone)
  if (!HISTORY_RECORD_KINDS.includes(kind)) {
    add('record', `Record: write ${HISTORY_RECORD_KINDS.join(', ')} (not "${text('record')}")`)
    return { record: null, problems }
  }
  if (kind === 'commissioning') {
    const day = parseDay(text('date'))
    if (!text('date')) add('date', 'Date: a commissioning row needs the commissioning (validation) date')
    else if (!day) add('date', `Date: "${text('date')}" is not a date; write YYYY-MM-DD`)
    else if (day > today) add('date', `Date: ${day} lies in the future`)
    if (problems.length) return { record: null, problems }
    return { record: { record: 'commissioning', tag, commissionedOn: day!, notes }, problems: [] }
  }
  if (kind === 'test') {
    // a bare date is taken at noon in the site's time zone (or now, for today), so the test keeps its calendar day
    const bare = parseDay(text('date'))
    let performedAt = text('date') ? parseSiteTime(text('date'), at.timeZone, [12, 0]) : null
    if (bare && bare === today && performedAt && performedAt.getTime() > at.now.getTime()) performedAt = at.now
    if (!text('date')) add('date', 'Date: a test row needs the test date')
    else if (!performedAt) add('date', `Date: "${text('date')}" is not a date; write YYYY-MM-DD or YYYY-MM-DD HH:MM`)
    else if (performedAt.getTime() > at.now.getTime()) add('date', `Date: ${text('date')} lies in the future`)
    const result = text('result').toLowerCase()
    if (!result) add('result', 'Result: write pass or fail')
    else if (!PASS.has(result) && !FAIL.has(result))
      add('result', `Result: write pass or fail (not "${text('result')}")`)
    const num = (k: 'asFound' | 'asLeft', label: string) => {
      const v = text(k)
      if (v === '') return null
      if (NUMBER.test(v)) return Number(v)
      add(
        k,
        /^-?\d+,\d+$/.test(v) ? `${label}: use a dot as the decimal separator` : `${label}: "${v}" is not a number`,
      )
      return null
    }
    const asFound = num('asFound', 'As-found')
    const asLeft = num('asLeft', 'As-left')
    const m = text('method')
      .toLowerCase()
      .replace(/[\s-]+/g, '_')
    const method = m === '' ? null : (HISTORY_TEST_METHODS as readonly string[]).includes(m) ? m : undefined
    if (method === undefined) add('method', `Method: write ${HISTORY_TEST_METHODS.join(', ')} or leave it empty`)
    if (problems.length || !performedAt) return { record: null, problems }
    return {
      record: {
        record: 'test',
        tag,
        performedAt,
        performedOn: dayIn(performedAt, at.timeZone),
        passed: PASS.has(result),
        asFound,
        asLeft,
        method: method as ImportedTest['method'],
        tester: text('tester'),
        notes,
      },
      problems: [],
    }
  }
  // a past bypass: both ends, in the past, the end after the start
  const start = text('start') ? parseSiteTime(text('start'), at.timeZone) : null
  const end = text('end') ? parseSiteTime(text('end'), at.timeZone) : null
  if (!text('start')) add('start', 'Bypass start: a bypass row needs its start')
  else if (!start) add('start', `Bypass start: "${text('start')}" is not a time; write YYYY-MM-DD HH:MM`)
  else if (start.getTime() > at.now.getTime()) add('start', `Bypass start: ${text('start')} lies in the future`)
  if (!text('end')) add('end', 'Bypass end: a bypass row needs its end (only past, removed bypasses are imported)')
  else if (!end) add('end', `Bypass end: "${text('end')}" is not a time; write YYYY-MM-DD HH:MM`)
  else if (end.getTime() > at.now.getTime())
    add('end', `Bypass end: ${text('end')} lies in the future; a bypass in force is requested in Limitkeeper`)
  if (start && end && end.getTime() <= start.getTime()) add('end', 'Bypass end: the end must lie after the start')
  if (!text('reason')) add('reason', 'Reason: a bypass row needs its reason')
  if (problems.length || !start || !end) return { record: null, problems }
  return { record: { record: 'bypass', tag, start, end, reason: text('reason'), notes }, problems: [] }
}

/** Whether two time spans overlap (touching ends do not). */
export function spansOverlap(a: { start: Date; end: Date }, b: { start: Date; end: Date }): boolean {
  return a.start.getTime() < b.end.getTime() && b.start.getTime() < a.end.getTime()
}

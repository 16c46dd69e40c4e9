// Demo history imported from the plant's former system through the history import itself, as a safety engineer
// would on moving to Limitkeeper: on three limits two old passing tests and a failed one by testers who are not users,
// a past bypass and commissioning dates (seedDemoHistory); then the last passing test of every other in-service limit
// the rest of the demo leaves untested, at each site (seedDemoFormerTests). Invented plant, invented people.
import Papa from 'papaparse'
import { HISTORY_COLUMNS, type HistoryColumnKey } from '../../shared/schemas/history-import.ts'
import type { AppDeps } from '../deps.ts'
import { dayIn } from '../../shared/domain/history-import.ts'
import { checkHistoryImport } from '../features/history/history-import.service.ts'
import type { DemoActor } from './demo-actors.ts'

const DAY = 86_400_000

export async function seedDemoHistory(
  deps: AppDeps,
  eng: DemoActor,
  site: { id: number; timeZone: string },
  limits: { tag: string }[],
): Promise<void> {
  const [a, b, c] = limits
  if (!a || !b || !c) return
  const now = deps.clock.now().getTime()
  const day = (daysAgo: number) => dayIn(new Date(now - daysAgo * DAY), site.timeZone)
  const rows: HistoryRow[] = [
    { record: 'commissioning', tag: a.tag, date: day(900) },
    {
      record: 'test',
      tag: a.tag,
      date: day(410),
      result: 'pass',
      tester: 'Wendell Haverly',
      notes: 'Former system record',
    },
    { record: 'test', tag: a.tag, date: day(45), result: 'pass', tester: 'Wendell Haverly' },
    {
      record: 'test',
      tag: b.tag,
      date: day(300),
      result: 'fail',
      tester: 'Corra Bellweather',
      notes: 'Repaired the same day',
    },
    {
      record: 'bypass',
      tag: b.tag,
      start: `${day(301)} 07:00`,
      end: `${day(301)} 15:30`,
      reason: 'Transmitter replaced',
    },
    { record: 'commissioning', tag: c.tag, date: day(60) },
  ]
  await importHistory(deps, eng, site.id, rows, 'former-system-history.csv')
}

type HistoryRow = Partial<Record<HistoryColumnKey, string>>

/** Imports `rows` at the site through the history import, checked and committed at once. */
async function importHistory(deps: AppDeps, eng: DemoActor, siteId: number, rows: HistoryRow[], fileName: string) {
  const text = Papa.unparse({
    fields: HISTORY_COLUMNS.map((col) => col.header),
    data: rows.map((r) => HISTORY_COLUMNS.map((col) => r[col.key] ?? '')),
  })
  await checkHistoryImport(
    deps,
    eng.ability,
    eng.ctx,
    eng.ctx.actorId,
    { buffer: Buffer.from(text, 'utf8'), fileName },
    { siteId, dryRun: false },
  )
}

/**
 * The former system's last passing test of every in-service limit of the site that the rest of the demo leaves
 * untested and uncommissioned, imported as the site's safety engineer would on moving to Limitkeeper, so that the
 * demo plant's schedule looks like a running plant's: most limits tested within their interval, a few due within the
 * month, a few overdue, and the last three (by tag) commissioned weeks ago, their first test not yet due. The dates
 * follow a fixed pattern over the limits in tag order, not chance, so every seed is the same.
 */
export async function seedDemoFormerTests(
  deps: AppDeps,
  eng: DemoActor,
  site: { id: number; timeZone: string },
  tester: string,
): Promise<void> {
  const limits = await deps.db
    .selectFrom('limit_function')
    .select(['tag', 'test_interval_months'])
    .where('site_id', '=', site.id)
    .where('status', '=', 'active')
    .where('test_status', '=', 'never_tested')
    .where('commissioned_at', 'is', null)
    .where('protection_state', '=', 'in_service')
    .orderBy('tag')
    .execute()
  if (limits.length < 4) return
  const now = deps.clock.now().getTime()
  const day = (daysAgo: number) => dayIn(new Date(now - daysAgo * DAY), site.timeZone)
  const tested = limits.slice(0, -3)
  const rows: HistoryRow[] = tested.map((l, i) => {
    const interval = l.test_interval_months * 30
    // past the due date and the site's default grace of 30 days; a week or three before the due date; or within
    const daysAgo =
      i % 13 === 5
        ? interval + 40 + (i % 3) * 10
        : i % 11 === 3
          ? interval - 7 - (i % 3) * 7
          : Math.round(interval * (0.15 + 0.6 * (((i * 37) % 100) / 100)))
    return { record: 'test', tag: l.tag, date: day(daysAgo), result: 'pass', tester, notes: 'Former system record' }
  })
  const commissioned = limits
    .slice(-3)
    .map((l, i): HistoryRow => ({ record: 'commissioning', tag: l.tag, date: day(30 + 15 * i) }))
  await importHistory(deps, eng, site.id, [...rows, ...commissioned], 'former-system-last-tests.csv')
}

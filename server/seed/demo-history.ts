// Demo history imported from the plant's former system through the history import itself, as a safety engineer
// would on moving to Limitkeeper: two old passing tests and a failed one by testers who are not users, a past bypass,
// and a commissioning date, on limits the rest of the demo activity leaves untested. Invented plant, invented people.
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
  const rows: Partial<Record<HistoryColumnKey, string>>[] = [
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
  const text = Papa.unparse({
    fields: HISTORY_COLUMNS.map((col) => col.header),
    data: rows.map((r) => HISTORY_COLUMNS.map((col) => r[col.key] ?? '')),
  })
  await checkHistoryImport(
    deps,
    eng.ability,
    eng.ctx,
    eng.ctx.actorId,
    { buffer: Buffer.from(text, 'utf8'), fileName: 'former-system-history.csv' },
    { siteId: site.id, dryRun: false },
  )
}

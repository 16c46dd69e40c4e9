import type { AppAbility } from '../../../shared/abilities/index.ts'
import { ALARM_TARGETS, computeAlarmFigures } from '../../../shared/domain/alarm-figures.ts'
import {
  type AlarmFigures,
  type AlarmFiguresQuery,
  type AlarmPolicy,
  DEFAULT_ALARM_POLICY,
} from '../../../shared/schemas/alarms.ts'
import { SitePolicySchema } from '../../../shared/schemas/sites.ts'
import { authorize } from '../../authorize.ts'
import type { AppDeps } from '../../deps.ts'
import { notFound, validationFailed } from '../../errors.ts'
import { closingNote, headedTable, renderPdf } from '../../pdf.ts'
import * as repo from './alarms.repository.ts'

// Alarm-system performance figures for a site, area or operator position and period (default: the last 30 days,
// ISA-18.2's minimum basis). Definitions and sources: docs/domain/alarm-figures.md.

const DAY = 86_400_000
const iso = (sec: number) => new Date(Math.round(sec * 1000)).toISOString()

export async function sitePolicy(deps: AppDeps, siteId: number) {
  const site = await repo.findSiteWithPolicy(deps.db, siteId)
  if (!site) throw validationFailed({ siteId: ['The site does not exist'] }, 'The site does not exist')
  const parsed = SitePolicySchema.safeParse(site.policy ?? {})
  const alarms: AlarmPolicy = parsed.success ? parsed.data.alarms : DEFAULT_ALARM_POLICY
  return { site, alarms }
}

export async function alarmFigures(deps: AppDeps, ability: AppAbility, q: AlarmFiguresQuery): Promise<AlarmFigures> {
  const { alarms } = await sitePolicy(deps, q.siteId)
  authorize(ability, 'read', 'AlarmJournal', { siteId: q.siteId })
  if (q.areaId) {
    const area = await repo.areaSite(deps.db, q.areaId)
    if (!area || area.site_id !== q.siteId) throw notFound('Area')
  }
  const to = q.to ? new Date(q.to) : deps.clock.now()
  const from = q.from ? new Date(q.from) : new Date(to.getTime() - 30 * DAY)
  const cols = await repo.journalColumns(deps.pool, q.siteId, from, to, { areaId: q.areaId, position: q.position })
  const f = computeAlarmFigures(cols, {
    from: from.getTime() / 1000,
    to: to.getTime() / 1000,
    floodThreshold: alarms.floodThreshold,
    chatter: { count: alarms.chatterCount, windowSec: alarms.chatterWindowSec },
    fleetingSec: alarms.fleetingSec,
    staleHours: alarms.staleHours,
  })
  const named = [...f.badActors.map((b) => b.tag), ...f.chattering.map((c) => c.tag)]
  const [limitIds, unmatchedTags, shelves] = await Promise.all([
    repo.limitIdsByTag(deps.db, q.siteId, named),
    repo.unmatchedJournalTags(deps.db, q.siteId, from, to),
    repo.shelvesWithoutRecord(deps.db, q.siteId, from, to),
  ])
  const limitOf = (tag: string) => limitIds.get(tag.toLowerCase()) ?? null
  return {
    siteId: q.siteId,
    from: from.toISOString(),
    to: to.toISOString(),
    positions: cols.positions,
    positionCount: f.positions,
    annunciated: f.annunciated,
    hours: f.hours,
    perPositionPerHour: f.perPositionPerHour,
    perPositionPer10Min: f.perPositionPer10Min,
    tenMinute: { start: f.tenMinute.start.map(iso), busiest: f.tenMinute.busiest },
    peak10Min: f.peak10Min,
    floodPeriods: f.floodPeriods,
    periods: f.periods,
    floodShare: f.floodShare,
    longestFlood: f.longestFlood
      ? { ...f.longestFlood, start: iso(f.longestFlood.start), end: iso(f.longestFlood.end) }
      : null,
    badActors: f.badActors.map((b) => ({ ...b, limitId: limitOf(b.tag) })),
    badActorShare: f.badActorShare,
    chattering: f.chattering.map((c) => ({ ...c, limitId: limitOf(c.tag) })),
    fleeting: f.fleeting,
    fleetingCount: f.fleetingCount,
    stale: f.stale.map((s) => ({ ...s, since: iso(s.since) })),
    standing: f.standing,
    priority: f.priority,
    states: f.states,
    targets: ALARM_TARGETS,
    policy: alarms,
    findings: {
      unmatchedTags,
      shelvesWithoutRecord: shelves.map((s) => ({ tag: s.tag, at: new Date(s.at).toISOString() })),
    },
  }
}

const pct = (x: number) => `${(x * 100).toFixed(1)} %`
const num = (x: number, d = 2) => x.toFixed(d)

/** The monthly report for the plant manager (PDF): every figure beside its target and source. */
export async function monthlyReport(
  deps: AppDeps,
  ability: AppAbility,
  q: { siteId: number; month: string },
): Promise<{ pdf: Buffer; fileName: string }> {
  const { site } = await sitePolicy(deps, q.siteId)
  const [y, m] = q.month.split('-').map(Number)
  const from = new Date(Date.UTC(y, m - 1, 1))
  const to = new Date(Date.UTC(y, m, 1))
  const f = await alarmFigures(deps, ability, { siteId: q.siteId, from: from.toISOString(), to: to.toISOString() })
  const t = ALARM_TARGETS
  const row = (name: string, value: string, target: string, source: string) => [name, value, target, source]
  const figures = [
    row('Annunciated alarms', String(f.annunciated), '—', '—'),
    row(
      'Alarms per position per hour',
      num(f.perPositionPerHour),
      `~${t.perHour.target} (max ~${t.perHour.max})`,
      t.perHour.source,
    ),
    row(
      'Alarms per position per 10 min',
      num(f.perPositionPer10Min),
      `~${t.per10Min.target} (max ~${t.per10Min.max})`,
      t.per10Min.source,
    ),
    row('Peak 10-minute count', String(f.peak10Min), `≤ ${t.peak10Min.target}`, t.peak10Min.source),
    row(
      '10-minute periods in flood',
      `${f.floodPeriods} of ${f.periods} (${pct(f.floodShare)})`,
      '< 1 %',
      t.floodShare.source,
    ),
    row('Top-10 share', pct(f.badActorShare), '≤ 5 %', t.top10Share.source),
    row('Chattering alarms', String(f.chattering.length), '0', t.chattering.source),
    row('Fleeting activations', String(f.fleetingCount), '0', t.fleeting.source),
    row('Stale alarms', String(f.stale.length), `< ${t.stale.target}`, t.stale.source),
    row('Standing alarms at month end', String(f.standing.length), `< ${t.standing.target}`, t.standing.source),
    row(
      'Priority low / medium / high / critical',
      `${pct(f.priority.low)} / ${pct(f.priority.medium)} / ${pct(f.priority.high)} / ${pct(f.priority.critical)}`,
      '~80 / 15 / 5 / < 1 %',
      t.priority.source,
    ),
    row('Shelved', `${f.states.shelved.count}, ${num(f.states.shelved.hours, 1)} h`, '—', 'ISA-18.2 (from memory)'),
    row(
      'Suppressed by design',
      `${f.states.suppressed.count}, ${num(f.states.suppressed.hours, 1)} h`,
      '—',
      'ISA-18.2',
    ),
    row(
      'Out of service',
      `${f.states.out_of_service.count}, ${num(f.states.out_of_service.hours, 1)} h`,
      '—',
      'ISA-18.2',
    ),
  ]
  const doc = {
    info: { title: `Alarm-system performance ${site.code} ${q.month}` },
    content: [
      { text: `Alarm-system performance — ${site.name} (${site.code}), ${q.month}`, fontSize: 14, bold: true },
      { text: `Period ${f.from} to ${f.to} (UTC); ${f.positionCount} operator position(s).`, margin: [0, 4, 0, 8] },
      { ...headedTable(['auto', 'auto', 'auto', '*'], ['Figure', 'Value', 'Target', 'Source'], figures), fontSize: 8 },
      { text: 'Bad actors (top 10)', bold: true, margin: [0, 10, 0, 4] },
      {
        ...headedTable(
          ['*', 'auto', 'auto'],
          ['Tag', 'Annunciations', 'Share'],
          f.badActors.map((b) => [b.tag, String(b.count), pct(f.annunciated ? b.count / f.annunciated : 0)]),
        ),
        fontSize: 8,
      },
      {
        text: f.longestFlood
          ? `Longest flood: ${f.longestFlood.start} to ${f.longestFlood.end}, ${f.longestFlood.annunciated} alarms; ` +
            `top: ${f.longestFlood.top.map((x) => `${x.tag} (${x.count})`).join(', ')}.`
          : 'No flood in the month.',
        margin: [0, 8, 0, 0],
      },
      closingNote(
        'Figures come from the imported alarm journal. ' +
          'Targets marked "from memory" are defaults of the site policy, ' +
          'not quotations of the standards. The register is not the safety system: verify settings on the device ' +
          'under the plant’s procedures; local codes and licensed engineering judgement prevail.',
        12,
      ),
    ],
  }
  return { pdf: await renderPdf(doc), fileName: `alarm-performance-${site.code}-${q.month}.pdf` }
}

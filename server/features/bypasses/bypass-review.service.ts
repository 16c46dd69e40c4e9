import {
  compareToTarget,
  effectivePfd,
  sifPfd,
  silBand,
  type Subsystem,
} from '../../../shared/domain/sif-reliability.ts'
import type { BypassDto, BypassReviewDto } from '../../../shared/schemas/bypasses.ts'
import { FAULT_EXPOSURE_CONVENTION, faultExposureSpans, hoursWithin } from '../../../shared/domain/fault-exposure.ts'
import { isTestOverdue } from '../../../shared/domain/rules/trip-tests.ts'
import { failureRates } from '../demands/failure-rates.service.ts'
import type { AppDeps } from '../../deps.ts'
import { validationFailed } from '../../errors.ts'
import { policyOf } from '../sites/sites.service.ts'
import { deferralsBetween } from '../trip-tests/trip-tests.repository.ts'
import {
  degradationSpansOf,
  findDegradationSpans,
  findSitePolicies,
  findSilLimitsForRiskErosion,
  signedTestOutcomes,
} from './bypasses.repository.ts'
import { type BypassListQuery, listBypasses } from './bypasses.service.ts'

const HOUR = 3_600_000

/** Overlap of [a0, a1] with [b0, b1] in hours. */
function overlapHours(a0: number, a1: number, b0: number, b1: number) {
  return Math.max(0, Math.min(a1, b1) - Math.max(a0, b0)) / HOUR
}

/** Calendar months (UTC) from `from` to `to`, as [start, end, 'YYYY-MM']. */
function months(from: Date, to: Date): [number, number, string][] {
  const out: [number, number, string][] = []
  let y = from.getUTCFullYear()
  let m = from.getUTCMonth()
  for (;;) {
    const start = Date.UTC(y, m, 1)
    if (start >= to.getTime()) break
    const end = Date.UTC(y, m + 1, 1)
    out.push([start, end, `${y}-${String(m + 1).padStart(2, '0')}`])
    m++
    if (m === 12) {
      m = 0
      y++
    }
  }
  return out
}

function activeSpan(b: BypassDto, now: number): [number, number] | null {
  if (!b.activatedAt) return null
  return [new Date(b.activatedAt).getTime(), b.removedAt ? new Date(b.removedAt).getTime() : now]
}

function overdueSpan(b: BypassDto, now: number): [number, number] | null {
  const span = activeSpan(b, now)
  if (!span) return null
  const end = new Date(b.plannedEnd).getTime()
  return span[1] > end ? [end, span[1]] : null
}

/**
 * The plant manager's review over a period (docs/bypasses.md#the-plant-managers-review): history rows, KPIs and chart
 * series (bypass hours per month, the ten limits with most bypass hours, overdue bypasses per month, share past planned
 * end), plus hours degraded by failed tests and the test deferrals requested, approved and waiting.
 * Every figure counts the time each bypass was actually in force, from its
 * activation to its removal (or now), whatever was planned.
 */
export async function bypassReview(
  deps: AppDeps,
  q: Omit<BypassListQuery, 'page' | 'pageSize'> & { from: Date; to: Date },
): Promise<BypassReviewDto> {
  const now = deps.clock.now().getTime()
  const { items } = await listBypasses(deps, { ...q, page: 1, pageSize: 10_000 })
  const from = q.from.getTime()
  const to = Math.min(q.to.getTime(), now)
  const inPeriod = items.filter((b) => {
    const span = activeSpan(b, now)
    return span
      ? overlapHours(span[0], span[1], from, to) > 0
      : new Date(b.createdAt).getTime() >= from && new Date(b.createdAt).getTime() < to
  })
  // the first and last month count only their part inside the period, like the per-limit totals
  const monthList = months(new Date(from), new Date(to)).map(([s, e, label]): [number, number, string] => [
    Math.max(s, from),
    Math.min(e, to),
    label,
  ])
  const hoursPerMonth = monthList.map(([s, e, label]) => ({
    month: label,
    hours: inPeriod.reduce((sum, b) => {
      const sp = activeSpan(b, now)
      return sum + (sp ? overlapHours(sp[0], sp[1], s, e) : 0)
    }, 0),
  }))
  const overduePerMonth = monthList.map(([s, e, label]) => ({
    month: label,
    count: inPeriod.filter((b) => {
      const sp = overdueSpan(b, now)
      return sp ? overlapHours(sp[0], sp[1], s, e) > 0 : false
    }).length,
  }))
  const byLimit = new Map<number, { limitId: number; tag: string; hours: number }>()
  for (const b of inPeriod) {
    const sp = activeSpan(b, now)
    if (!sp) continue
    const e = byLimit.get(b.limitId) ?? { limitId: b.limitId, tag: b.limitTag, hours: 0 }
    e.hours += overlapHours(sp[0], sp[1], from, to)
    byLimit.set(b.limitId, e)
  }
  const topLimits = [...byLimit.values()].sort((a, b) => b.hours - a.hours).slice(0, 10)
  const ended = inPeriod.filter((b) => b.activatedAt && (b.removedAt || b.status === 'active'))
  const pastEnd = ended.filter((b) => overdueSpan(b, now) !== null)
  const completed = inPeriod.filter((b) => b.removedAt && b.activatedAt)
  const nowMonth = new Date(now)
  const monthStart = Date.UTC(nowMonth.getUTCFullYear(), nowMonth.getUTCMonth(), 1)
  // "now" and "this month" whatever the period: the bypasses in force at some time since the 1st of this month
  const { items: recent } = await listBypasses(deps, {
    ...q,
    from: new Date(monthStart),
    to: new Date(now + 1),
    page: 1,
    pageSize: 10_000,
  })
  const sites = await findSitePolicies(deps.db, q.siteIds)
  const shiftHours = Math.min(...sites.map((s) => policyOf(s).bypassMaxHoursSupervisor), 12)
  const degradations = (await findDegradationSpans(deps.db, q)).filter(
    (d) => overlapHours(d.opened_at.getTime(), d.cleared_at?.getTime() ?? now, from, to) > 0,
  )
  // test deferrals requested in the period (and those still waiting for a decision, whenever requested)
  const deferrals = (await deferralsBetween(deps.db, q.siteIds, q.from, q.to)).filter(
    (d) => !q.areaIds?.length || q.areaIds.includes(d.area_id),
  )
  const deferralsInPeriod = deferrals.filter((d) => d.requested_at.getTime() >= from)
  const inForceThisMonth = recent.filter((b) => {
    const sp = activeSpan(b, now)
    return sp !== null && sp[1] >= monthStart
  })
  const kpis = {
    activeNow: recent.filter((b) => b.status === 'active').length,
    overdueNow: recent.filter((b) => b.overdue).length,
    hoursThisMonth: inForceThisMonth.length
      ? inForceThisMonth.reduce((sum, b) => {
          const sp = activeSpan(b, now)
          return sum + (sp ? overlapHours(sp[0], sp[1], monthStart, now) : 0)
        }, 0)
      : null,
    averageDurationHours: completed.length
      ? completed.reduce((s, b) => s + b.bypassedHours, 0) / completed.length
      : null,
    longerThanShift: inPeriod.filter((b) => b.bypassedHours > shiftHours).length,
    shiftHours,
    withoutMeasures: inPeriod.filter((b) => b.activatedAt && b.compensatingMeasures.length === 0).length,
    hoursDegraded: degradations.length
      ? degradations.reduce(
          (sum, d) => sum + overlapHours(d.opened_at.getTime(), d.cleared_at?.getTime() ?? now, from, to),
          0,
        )
      : null,
    sharePastPlannedEnd: ended.length ? pastEnd.length / ended.length : null,
    deferralsRequested: deferralsInPeriod.length,
    deferralsApproved: deferralsInPeriod.filter((d) => d.status === 'approved').length,
    deferralsWaiting: deferrals.filter((d) => d.status === 'requested').length,
  }
  return {
    period: { from: new Date(from).toISOString(), to: new Date(to).toISOString() },
    kpis,
    charts: { hoursPerMonth, topLimits, overduePerMonth },
    items: inPeriod,
  }
}

export const RISK_CAUTION =
  'Low demand mode only; not a SIL verification, and no substitute for the safety requirements specification or a ' +
  'functional safety assessment. PFD figures are estimates from the entered data; hardware fault tolerance and ' +
  "systematic capability are not assessed. The plant's safety requirements and licensed engineering judgement prevail."

/**
 * Risk erosion of each SIL-rated limit over a period: target, design and effective PFDavg side by side. Effective uses
 * the actual test interval (an overdue test lengthens it to the time since the last passing full test) and the bypassed
 * share of the period (a single bypassed channel degrades the voting instead).
 */
export async function riskErosion(deps: AppDeps, q: { siteIds: number[]; areaIds?: number[]; from: Date; to: Date }) {
  const now = deps.clock.now().getTime()
  const from = q.from.getTime()
  const to = Math.min(q.to.getTime(), now)
  const periodHours = (to - from) / HOUR
  if (!(periodHours > 0)) throw validationFailed({ from: ['The period must start before it ends, and before now'] })
  const limits = await findSilLimitsForRiskErosion(deps.db, q.siteIds, q.areaIds)
  const { items: bypasses } = await listBypasses(deps, {
    siteIds: q.siteIds,
    limitIds: limits.map((l) => l.id),
    page: 1,
    pageSize: 10_000,
  })
  // device models whose observed λDU bound (70 %) exceeds the λDU a limit's sensor subsystem assumes
  const rates = await failureRates(deps, q.siteIds, { from: null, to: new Date(now) })
  const aboveByLimit = new Map<
    number,
    { deviceKind: string; model: string; upper70: number; assumedLambdaDu: number }[]
  >()
  for (const g of rates.groups)
    for (const r of g.limits)
      if (r.verdict === 'above' && g.upper70 !== null)
        aboveByLimit.set(r.limitId, [
          ...(aboveByLimit.get(r.limitId) ?? []),
          { deviceKind: g.deviceKind, model: g.model, upper70: g.upper70, assumedLambdaDu: r.assumedLambdaDu },
        ])
  // fault exposure and degraded time (docs/bypasses.md#fault-exposure)
  const ids = limits.map((l) => l.id)
  const [tests, degradations] = await Promise.all([signedTestOutcomes(deps.db, ids), degradationSpansOf(deps.db, ids)])
  const dangerous = (r: (typeof tests)[number]) =>
    r.as_found_result === 'out_dangerous' ||
    r.as_found_result === 'no_trip' ||
    (r.channels ?? []).some((c) => c.asFoundResult === 'out_dangerous' || c.asFoundResult === 'no_trip')
  const periodFrom = new Date(from)
  const periodTo = new Date(to)
  const rows = limits
    .map((l) => {
      const subsystems = l.subsystems
      if (!subsystems.length) return null
      const mine = bypasses.filter((b) => b.limitId === l.id)
      let whole = 0
      let channel = 0
      let channelRole: Subsystem['role'] = 'sensor'
      for (const b of mine) {
        const sp = activeSpan(b, now)
        if (!sp) continue
        const h = overlapHours(sp[0], sp[1], from, to)
        if (b.channelInstrumentId) channel += h
        else whole += h
        channelRole = 'sensor'
      }
      const inServiceFrom = l.commissioned_at ? new Date(`${l.commissioned_at}T00:00:00Z`) : l.created_at
      const spans = faultExposureSpans(
        tests
          .filter((t) => t.limit_id === l.id)
          .map((t) => ({ at: t.performed_at, passed: t.passed && t.kind === 'full', dangerousAsFound: dangerous(t) })),
        inServiceFrom,
        new Date(now),
      )
      const faultExposureHours = hoursWithin(spans, periodFrom, periodTo)
      const degradedHours = hoursWithin(
        degradations
          .filter((g) => g.limit_id === l.id)
          .map((g) => ({ from: g.opened_at, to: g.cleared_at ?? new Date(now) })),
        periodFrom,
        periodTo,
      )
      const sinceLastPass = l.last_full_pass
        ? (now - new Date(`${l.last_full_pass}T00:00:00Z`).getTime()) / HOUR
        : // never tested: from commissioning (IEC 61511 validation), else from the limit's entry in the register
          (now - (l.commissioned_at ? Date.parse(`${l.commissioned_at}T00:00:00Z`) : l.created_at.getTime())) / HOUR
      // an overdue or never-tested function has gone untested longer than designed:
      // the interval is the time since the last pass
      const overdue = isTestOverdue(l.test_status)
      // only where the time since the last pass exceeds the designed interval does it stretch the interval
      const stretched = overdue && subsystems.some((s) => sinceLastPass > s.testIntervalMonths * 730)
      const actualIntervalHoursByRole = stretched
        ? Object.fromEntries(subsystems.map((s) => [s.role, Math.max(s.testIntervalMonths * 730, sinceLastPass)]))
        : undefined
      const designPfd = sifPfd(subsystems)
      const eff = effectivePfd({
        subsystems,
        actualIntervalHoursByRole,
        periodHours,
        bypassedHours: whole > 0 ? Math.min(whole, periodHours) : Math.min(channel, periodHours),
        bypassedSingleChannel: whole > 0 || channel === 0 ? null : { role: channelRole },
      })
      const target = l.sil
      const effective = compareToTarget(target, eff.pfd)
      return {
        limitId: l.id,
        tag: l.tag,
        description: l.description,
        targetSil: target,
        protectionState: l.protection_state,
        testStatus: l.test_status,
        design: { pfd: designPfd, rrf: 1 / designPfd, band: silBand(designPfd) },
        effective: { pfd: eff.pfd, rrf: 1 / eff.pfd, band: silBand(eff.pfd) },
        bypassedHours: whole,
        channelBypassedHours: channel,
        actualIntervalHours: actualIntervalHoursByRole ? Math.max(...Object.values(actualIntervalHoursByRole)) : null,
        belowTarget: !effective.meetsTarget,
        designBelowTarget: !compareToTarget(target, designPfd).meetsTarget,
        observedLambdaDuAbove: aboveByLimit.get(l.id) ?? [],
        neverTested: l.test_status === 'never_tested',
        untestedSince: l.last_full_pass ?? inServiceFrom.toISOString().slice(0, 10),
        faultExposureHours,
        faultExposures: spans
          .filter((s) => hoursWithin([s], periodFrom, periodTo) > 0)
          .map((s) => ({
            from: s.from.toISOString(),
            to: s.to.toISOString(),
            foundAt: s.foundAt.toISOString(),
            ongoing: s.ongoing,
          })),
        degradedHours,
      }
    })
    .filter((r): r is NonNullable<typeof r> => r !== null)
  return {
    period: { from: new Date(from).toISOString(), to: new Date(to).toISOString(), hours: periodHours },
    items: rows,
    faultExposureConvention: FAULT_EXPOSURE_CONVENTION,
    caution: RISK_CAUTION,
  }
}

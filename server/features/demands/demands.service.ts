import type { AppAbility } from '../../../shared/abilities/index.ts'
import { canRecordDemand, demandVerdicts, type DemandFacts } from '../../../shared/domain/rules/demands.ts'
import { limitRules } from '../../../shared/domain/rules/limits.ts'
import type {
  ClassifyDemandValues,
  CreateDemandValues,
  CreditDemandValues,
  DemandAssumptions,
  DemandAssumptionsValues,
  DemandDto,
  DemandRateRow,
  DemandRates,
} from '../../../shared/schemas/demands.ts'
import type { ListResult } from '../../../shared/schemas/common.ts'
import { readableRow } from '../../authorize.ts'
import type { AppDeps } from '../../deps.ts'
import { enforce, notFound, validationFailed } from '../../errors.ts'
import { type AuditContext, appendAudit } from '../audit/audit.repository.ts'
import { verifySignaturePassword } from '../session/session.service.ts'
import { contentHash, signAs } from '../signatures/signatures.ts'
import { policyOf } from '../sites/sites.service.ts'
import { refreshTestSchedule } from '../trip-tests/trip-tests.service.ts'
import { limitRecordOf } from '../register/register.mappers.ts'
import * as repo from './demands.repository.ts'

const ENTITY = 'Demand'
const HOURS_PER_YEAR = 8760

type Row = Awaited<ReturnType<typeof repo.loadDemandRows>>[number]

function facts(
  r: Pick<Row, keyof Omit<Row, 'policy'>> | NonNullable<Awaited<ReturnType<typeof repo.findDemandFacts>>>,
): DemandFacts {
  return {
    siteId: r.site_id,
    kind: r.kind,
    outcome: r.outcome,
    occurredAt: r.occurred_at,
    wholeFunction: r.whole_function,
    status: r.status,
    counts: r.counts,
    creditedAsTest: r.credited_as_test,
    recordedBy: r.recorded_by,
  }
}

function toDto(r: Row, ability: AppAbility, userId: number, now: Date): DemandDto {
  const iso = (d: Date | null) => (d ? d.toISOString() : null)
  return {
    ...limitRecordOf(r),
    instrumentId: r.instrument_id,
    instrumentTag: r.instrument_tag,
    kind: r.kind,
    outcome: r.outcome,
    occurredAt: r.occurred_at.toISOString(),
    description: r.description,
    cause: r.cause,
    evidence: r.evidence,
    workOrder: r.work_order,
    wholeFunction: r.whole_function,
    status: r.status,
    counts: r.counts,
    dangerousUndetected: r.dangerous_undetected,
    classificationNote: r.classification_note,
    classifiedBy: r.classified_by_name,
    classifiedAt: iso(r.classified_at),
    creditedAsTest: r.credited_as_test,
    creditNote: r.credit_note,
    creditedBy: r.credited_by_name,
    creditedAt: iso(r.credited_at),
    imported: r.imported,
    recordedBy: r.recorded_by_name,
    createdAt: r.created_at.toISOString(),
    actions: demandVerdicts(facts(r), { userId, ability }, policyOf(r), now),
  }
}

async function load(deps: AppDeps, ability: AppAbility, userId: number, ids: number[]): Promise<DemandDto[]> {
  const rows = await repo.loadDemandRows(deps.db, ids)
  const byId = new Map(rows.map((r) => [r.id, r]))
  const now = deps.clock.now()
  return ids.flatMap((id) => {
    const r = byId.get(id)
    return r ? [toDto(r, ability, userId, now)] : []
  })
}

export async function getDemand(deps: AppDeps, ability: AppAbility, userId: number, id: number): Promise<DemandDto> {
  const [d] = await load(deps, ability, userId, [id])
  return readableRow(d, ability, 'Demand')
}

export async function listDemands(
  deps: AppDeps,
  ability: AppAbility,
  userId: number,
  siteIds: number[],
  q: ReturnType<typeof parseListQuery>,
): Promise<ListResult<DemandDto>> {
  const { ids, total } = await repo.listDemandRows(
    deps.db,
    { siteIds, limitIds: q.limitId, kinds: q.kind, from: q.from, to: q.to, q: q.q },
    q.page,
    q.pageSize,
  )
  return { items: await load(deps, ability, userId, ids), total }
}

/** The list query with dates turned into Date objects. */
export function parseListQuery(q: {
  page: number
  pageSize: number
  q?: string
  limitId?: number[]
  kind?: DemandDto['kind'][]
  from?: string
  to?: string
}) {
  return { ...q, from: q.from ? new Date(q.from) : undefined, to: q.to ? new Date(q.to) : undefined }
}

export async function recordDemand(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  input: CreateDemandValues,
): Promise<DemandDto> {
  const limit = readableRow(await repo.findLimitForDemand(deps.db, input.limitId), ability, 'Limit')
  const now = deps.clock.now()
  const occurredAt = new Date(input.occurredAt)
  enforce(
    canRecordDemand(
      { userId: ctx.actorId!, ability },
      { siteId: limit.site_id, kind: input.kind, outcome: input.outcome, occurredAt },
      now,
    ),
  )
  if (input.instrumentId && !(await repo.instrumentOfLimit(deps.db, limit.id, input.instrumentId)))
    throw validationFailed({ instrumentId: [`The instrument is not a channel of ${limit.tag}`] })
  const id = await deps.db.transaction().execute(async (trx) => {
    const newId = await repo.insertDemand(trx, {
      siteId: limit.site_id,
      limitId: limit.id,
      instrumentId: input.instrumentId ?? null,
      kind: input.kind,
      outcome: input.kind === 'real_demand' ? (input.outcome ?? null) : null,
      occurredAt,
      description: input.description,
      cause: input.cause,
      evidence: input.evidence,
      workOrder: input.workOrder,
      wholeFunction: input.wholeFunction,
      recordedBy: ctx.actorId!,
      now,
    })
    await appendAudit(trx, deps.clock, ctx, {
      action: 'demand.record',
      entityType: ENTITY,
      entityId: newId,
      after: { ...input, limitTag: limit.tag },
    })
    return newId
  })
  return getDemand(deps, ability, ctx.actorId!, id)
}

export async function classifyDemand(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  input: ClassifyDemandValues,
): Promise<DemandDto> {
  await deps.db.transaction().execute(async (trx) => {
    const d = readableRow(await repo.findDemandFacts(trx, id, true), ability, 'Demand')
    const now = deps.clock.now()
    enforce(demandVerdicts(facts(d), { userId: ctx.actorId!, ability }, policyOf(d), now).classify)
    await repo.classifyDemandRow(trx, id, {
      counts: input.counts,
      dangerousUndetected: input.counts && input.dangerousUndetected,
      note: input.note,
      by: ctx.actorId!,
      now,
    })
    await appendAudit(trx, deps.clock, ctx, {
      action: 'demand.classify',
      entityType: ENTITY,
      entityId: id,
      before: { status: d.status },
      after: input,
    })
  })
  return getDemand(deps, ability, ctx.actorId!, id)
}

export async function creditDemand(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  input: CreditDemandValues,
): Promise<DemandDto> {
  const pre = readableRow(await repo.findDemandFacts(deps.db, id), ability, 'Demand')
  // role, policy and state first (nothing written), then the slow password check, then the locked transaction
  enforce(demandVerdicts(facts(pre), { userId: ctx.actorId!, ability }, policyOf(pre), deps.clock.now()).credit)
  const signer = await verifySignaturePassword(deps, ctx.actorId!, input.password, ctx, {
    entityType: ENTITY,
    entityId: id,
  })
  await deps.db.transaction().execute(async (trx) => {
    const d = await repo.findDemandFacts(trx, id, true)
    if (!d) throw notFound('Demand')
    const now = deps.clock.now()
    enforce(demandVerdicts(facts(d), { userId: ctx.actorId!, ability }, policyOf(d), now).credit)
    const content = {
      demandId: id,
      limitId: d.limit_id,
      occurredAt: d.occurred_at.toISOString(),
      description: d.description,
      evidence: d.evidence,
      coveredWhatTheTestCovers: true,
      note: input.note,
    }
    await signAs(trx, deps.clock, signer, {
      entityType: ENTITY,
      entityId: id,
      meaning: 'approved',
      contentHash: contentHash(content),
      comment: `Credited as a proof test: ${input.note}`,
    })
    await repo.creditDemandRow(trx, id, { note: input.note, by: ctx.actorId!, now })
    // the credited demand counts as a passing full test: the limit's next test falls due an interval after it
    const schedule = await refreshTestSchedule(trx, d.limit_id, now)
    await appendAudit(trx, deps.clock, ctx, {
      action: 'demand.credit_as_test',
      entityType: ENTITY,
      entityId: id,
      after: { ...content, signer: signer.name, testDueDate: schedule.dueDate },
    })
  })
  return getDemand(deps, ability, ctx.actorId!, id)
}

const num = (v: string | null) => (v === null ? null : Number(v))

/**
 * Observed demand and spurious-trip rates against the rates assumed in the hazard study, per limit and per site
 * (docs/domain/observed-rates.md). Events count unless an engineer classified them as not counting.
 */
export async function demandRates(
  deps: AppDeps,
  siteIds: number[],
  period: { from: Date; to: Date },
  limitIds?: number[],
): Promise<DemandRates> {
  const rows = await repo.demandCountsByLimit(deps.db, siteIds, period.from, period.to, limitIds)
  const limits: DemandRateRow[] = rows.map((r) => {
    const inService = r.commissioned_at ? new Date(`${r.commissioned_at}T00:00:00Z`) : r.created_at
    const start = Math.max(period.from.getTime(), inService.getTime())
    const observedYears = Math.max(0, (period.to.getTime() - start) / 3_600_000 / HOURS_PER_YEAR)
    const demands = Number(r.demands)
    const spuriousTrips = Number(r.spurious)
    const rate = (n: number) => (observedYears > 0 ? n / observedYears : null)
    const assumedDemand = num(r.assumed_demand_rate_per_year)
    const assumedSpurious = num(r.assumed_spurious_rate_per_year)
    const od = rate(demands)
    const os = rate(spuriousTrips)
    return {
      limitId: r.id,
      limitTag: r.tag,
      siteId: r.site_id,
      siteCode: r.site_code,
      sil: r.sil,
      commissionedAt: r.commissioned_at,
      observedYears,
      demands,
      spuriousTrips,
      observedDemandRatePerYear: od,
      assumedDemandRatePerYear: assumedDemand,
      observedSpuriousRatePerYear: os,
      assumedSpuriousRatePerYear: assumedSpurious,
      demandRateAboveAssumed: od !== null && assumedDemand !== null && od > assumedDemand,
      spuriousRateAboveAssumed: os !== null && assumedSpurious !== null && os > assumedSpurious,
    }
  })
  const bySite = new Map<number, DemandRateRow>()
  for (const l of limits) {
    const s = bySite.get(l.siteId) ?? {
      limitId: null,
      limitTag: null,
      siteId: l.siteId,
      siteCode: l.siteCode,
      sil: null,
      commissionedAt: null,
      observedYears: 0,
      demands: 0,
      spuriousTrips: 0,
      observedDemandRatePerYear: null,
      assumedDemandRatePerYear: 0,
      observedSpuriousRatePerYear: null,
      assumedSpuriousRatePerYear: 0,
      demandRateAboveAssumed: false,
      spuriousRateAboveAssumed: false,
    }
    s.observedYears = Math.max(s.observedYears, l.observedYears)
    s.demands += l.demands
    s.spuriousTrips += l.spuriousTrips
    // the site's rate is the sum of its limits' rates (events per year across the site)
    s.observedDemandRatePerYear = (s.observedDemandRatePerYear ?? 0) + (l.observedDemandRatePerYear ?? 0)
    s.observedSpuriousRatePerYear = (s.observedSpuriousRatePerYear ?? 0) + (l.observedSpuriousRatePerYear ?? 0)
    s.assumedDemandRatePerYear = (s.assumedDemandRatePerYear ?? 0) + (l.assumedDemandRatePerYear ?? 0)
    s.assumedSpuriousRatePerYear = (s.assumedSpuriousRatePerYear ?? 0) + (l.assumedSpuriousRatePerYear ?? 0)
    s.demandRateAboveAssumed ||= l.demandRateAboveAssumed
    s.spuriousRateAboveAssumed ||= l.spuriousRateAboveAssumed
    bySite.set(l.siteId, s)
  }
  return {
    period: { from: period.from.toISOString(), to: period.to.toISOString() },
    limits,
    sites: [...bySite.values()],
    note:
      'Observed rate = counted events ÷ years observed ' +
      '(from commissioning, or the entry of the limit, to the end of ' +
      'the period). A rate from few events is uncertain; a demand rate above once a year leaves low-demand mode. ' +
      'Low demand mode only; not a SIL verification.',
  }
}

/**
 * Sets the hazard study's assumed demand and spurious-trip rates and the commissioning date of a limit (the register's
 * rule book, `setDemandAssumptions`: safety engineers, while the limit is not retired; the change and its source go to
 * the audit trail). Commissioning starts the "never tested" count.
 */
export async function setDemandAssumptions(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  limitId: number,
  input: DemandAssumptionsValues,
): Promise<DemandAssumptions> {
  const now = deps.clock.now()
  await deps.db.transaction().execute(async (trx) => {
    const before = readableRow(await repo.findLimitAssumptions(trx, limitId, true), ability, 'Limit')
    enforce(
      limitRules({ siteId: before.site_id, tag: before.tag, status: before.status }, { ability }).setDemandAssumptions,
    )
    if (input.commissionedAt && new Date(`${input.commissionedAt}T00:00:00Z`) > now)
      throw validationFailed({ commissionedAt: ['The commissioning date cannot lie in the future'] })
    await repo.updateLimitAssumptions(trx, limitId, {
      demand: input.assumedDemandRatePerYear === null ? null : String(input.assumedDemandRatePerYear),
      spurious: input.assumedSpuriousRatePerYear === null ? null : String(input.assumedSpuriousRatePerYear),
      commissionedAt: input.commissionedAt,
      now,
    })
    // the commissioning date starts the first test interval of a limit never tested (docs/domain/due-dates.md)
    await refreshTestSchedule(trx, limitId, now)
    await appendAudit(trx, deps.clock, ctx, {
      action: 'limit.demand_assumptions',
      entityType: 'Limit',
      entityId: limitId,
      before: {
        assumedDemandRatePerYear: num(before.assumed_demand_rate_per_year),
        assumedSpuriousRatePerYear: num(before.assumed_spurious_rate_per_year),
        commissionedAt: before.commissioned_at,
      },
      after: input,
      reason: input.reason,
    })
  })
  return {
    limitId,
    assumedDemandRatePerYear: input.assumedDemandRatePerYear,
    assumedSpuriousRatePerYear: input.assumedSpuriousRatePerYear,
    commissionedAt: input.commissionedAt,
  }
}

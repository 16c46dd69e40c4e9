import type { Transaction } from 'kysely'
import type { AppAbility } from '../../../shared/abilities/index.ts'
import { checkOperatingWindow, type WindowFinding } from '../../../shared/domain/operating-window.ts'
import { type ClassificationFinding, classifyLimit } from '../../../shared/domain/priority.ts'
import { limitRules } from '../../../shared/domain/rules/limits.ts'
import { ErrorCode } from '../../../shared/errors.ts'
import type { CreateLimitInput, Limit, UpdateLimitInput } from '../../../shared/schemas/register.ts'
import { CreateLimitInputSchema } from '../../../shared/schemas/register.ts'
import type { SitePolicy } from '../../../shared/schemas/sites.ts'
import { authorize, readableRow } from '../../authorize.ts'
import type { Clock } from '../../clock.ts'
import type { AppDeps } from '../../deps.ts'
import type { Database } from '../../db/schema.ts'
import { AppError, enforce, notFound, validationFailed } from '../../errors.ts'
import { type AuditContext, appendAudit } from '../audit/audit.repository.ts'
import { policyOf } from '../sites/sites.service.ts'
import { processForNew } from './processes.service.ts'
import * as repo from './limits.repository.ts'
import { limitSnapshot, toLimit } from './register.mappers.ts'

type Trx = Transaction<Database>

export interface Evaluation {
  /** operating-window findings and the classification's structural errors (docs/domain/alarm-classification.md) */
  errors: (WindowFinding | ClassificationFinding)[]
  warnings: WindowFinding[]
  priority: Limit['priority']
  priorityExplanation: string
}

/** Loads a site's policy inside the transaction. */
async function sitePolicy(trx: Trx, siteId: number): Promise<SitePolicy> {
  const site = await repo.findSitePolicyRow(trx, siteId)
  return policyOf(site)
}

/**
 * The operating-window check and the priority derivation for a limit definition against its primary instrument and
 * the other limits on it (shared/domain; the same functions run in the browser).
 */
export async function evaluateLimit(
  trx: Trx,
  draft: CreateLimitInput,
  siteId: number,
  limitId: number | null,
): Promise<Evaluation> {
  const instruments = await repo.findInstrumentRows(trx, draft.instrumentIds)
  if (instruments.length !== new Set(draft.instrumentIds).size)
    throw validationFailed({ instrumentIds: ['An instrument does not exist'] })
  if (instruments.some((i) => i.site_id !== siteId))
    throw validationFailed({ instrumentIds: ["Instruments must belong to the limit's site"] })
  const primary = instruments.find((i) => i.id === draft.instrumentIds[0])!
  const policy = await sitePolicy(trx, siteId)
  const siblings = (await repo.findSiblingLimits(trx, primary.id)).filter((s) => s.id !== limitId)
  const n = (v: string | null) => (v === null ? null : Number(v))
  const result = checkOperatingWindow({
    limit: { ...draft, id: limitId },
    instrument: {
      rangeLow: Number(primary.range_low),
      rangeHigh: Number(primary.range_high),
      normalLow: n(primary.normal_low),
      normalHigh: n(primary.normal_high),
      designLow: n(primary.design_low),
      designHigh: n(primary.design_high),
      burnout: primary.burnout,
    },
    siblings: siblings.map((s) => ({
      id: s.id,
      tag: s.tag,
      direction: s.direction,
      limitClass: s.limit_class,
      setpoint: Number(s.setpoint),
      status: s.status,
    })),
    defaultTolerancePercentSpan: policy.defaultTolerancePercentSpan,
  })
  const c = classifyLimit(draft, policy.priorityMatrix, policy.alarmPhilosophy)
  const errors = [...result.errors, ...c.errors]
  // The classification warnings (operator too slow) are shown by the form and the limit page from the same rule in
  // shared/domain/priority.ts; they are not operating-window findings and are not stored with them.
  const warnings = result.warnings
  const priority: Limit['priority'] = c.priority
  const priorityExplanation = c.explanation
  return { errors, warnings, priority, priorityExplanation }
}

/** 422 with every blocking finding as a field message and the whole window result. */
function windowError(ev: Evaluation): AppError {
  const fields: Record<string, string[]> = {}
  for (const e of ev.errors) (fields[e.field ?? 'setpoint'] ??= []).push(e.message)
  return new AppError(422, ErrorCode.UNPROCESSABLE, 'The limit does not fit its operating window', {
    fields,
    operatingWindow: { errors: ev.errors, warnings: ev.warnings },
  })
}

function columns(d: CreateLimitInput, ev: Evaluation) {
  return {
    tag: d.tag,
    description: d.description,
    primary_instrument_id: d.instrumentIds[0],
    direction: d.direction,
    limit_class: d.limitClass,
    setpoint: d.setpoint,
    deadband: d.deadband,
    deadband_unit: d.deadbandUnit,
    on_delay_sec: d.onDelaySec,
    off_delay_sec: d.offDelaySec,
    latching: d.latching,
    reset_role: d.latching ? d.resetRole : null,
    bad_value_trip: d.badValueTrip,
    action: d.action,
    consequence: d.consequence,
    operator_response: d.operatorResponse,
    response_time_min: d.responseTimeMin,
    severity: d.severity,
    priority: ev.priority,
    priority_explanation: ev.priorityExplanation,
    analytical_limit: d.analyticalLimit,
    process_safety_time_sec: d.processSafetyTimeSec,
    required_response_time_sec: d.requiredResponseTimeSec,
    bypass_permitted: d.bypassPermitted,
    max_bypass_hours: d.bypassPermitted ? d.maxBypassHours : null,
    compensating_measures: JSON.stringify(d.compensatingMeasures),
    test_interval_months: d.testIntervalMonths,
    test_grace_days: d.testGraceDays,
    code_set_interval: d.codeSetInterval,
    sil: d.sil,
    subsystems: JSON.stringify(d.sil ? d.subsystems : []),
    alarm_type: d.alarmType,
    causes: d.causes,
    confirmation: d.confirmation,
    impact_category: d.impactCategory,
    safety_related_alarm: d.limitClass === 'alarm' && d.safetyRelatedAlarm,
    claimed_risk_reduction: d.limitClass === 'alarm' && d.safetyRelatedAlarm ? d.claimedRiskReduction : null,
    window_errors: JSON.stringify(ev.errors),
    window_warnings: JSON.stringify(ev.warnings),
  }
}

async function loadLimit(db: AppDeps['db'] | Trx, id: number, lock = false): Promise<Limit> {
  const row = await repo.findLimitById(db, id, lock)
  if (!row) throw notFound('Limit')
  return toLimit(row, (await repo.findInstrumentIdsByLimitIds(db, [id])).get(id) ?? [])
}

async function writeRevision(
  trx: Trx,
  clock: Clock,
  limit: Limit,
  ctx: AuditContext,
  changeRequestId: number | null,
  reason: string | null,
) {
  await repo.insertLimitRevision(trx, {
    limit_id: limit.id,
    revision: limit.revision,
    snapshot: JSON.stringify(limitSnapshot(limit)),
    changed_by: ctx.actorId,
    changed_at: clock.now(),
    change_request_id: changeRequestId,
    reason,
  })
}

function toDraft(l: Limit): CreateLimitInput {
  return CreateLimitInputSchema.parse({ ...l, testGraceDays: l.testGraceDays })
}

export async function getLimit(deps: AppDeps, ability: AppAbility, id: number): Promise<Limit> {
  return readableRow(await loadLimit(deps.db, id), ability, 'Limit')
}

export async function createLimit(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  input: CreateLimitInput,
): Promise<Limit> {
  const process = await processForNew(deps, ability, input.processId)
  authorize(ability, 'create', 'Limit', { siteId: process.site_id })
  const id = await deps.db.transaction().execute((trx) => insertLimit(trx, deps.clock, ctx, input, process))
  return loadLimit(deps.db, id)
}

/**
 * Inserts a draft (proposed) limit with its voted instruments, first revision and audit event, after the
 * operating-window check (errors refuse it). Also used by the import and the demo seed.
 */
export async function insertLimit(
  trx: Trx,
  clock: Clock,
  ctx: AuditContext,
  input: CreateLimitInput,
  process: { id: number; area_id: number; site_id: number },
  batchId?: string,
): Promise<number> {
  await assertTagFree(trx, process.site_id, input.tag, null)
  const ev = await evaluateLimit(trx, input, process.site_id, null)
  if (ev.errors.length) throw windowError(ev)
  const now = clock.now()
  const id = await repo.insertLimitRow(trx, {
    ...columns(input, ev),
    process_id: process.id,
    area_id: process.area_id,
    site_id: process.site_id,
    created_by: ctx.actorId,
    created_at: now,
    updated_at: now,
  })
  await repo.replaceLimitInstruments(trx, id, input.instrumentIds)
  const limit = await loadLimit(trx, id)
  await writeRevision(trx, clock, limit, ctx, null, 'created as a draft')
  await appendAudit(trx, clock, ctx, {
    action: 'limit.create',
    entityType: 'Limit',
    entityId: id,
    siteId: process.site_id,
    after: limitSnapshot(limit),
    batchId,
  })
  return id
}

async function assertTagFree(trx: Trx, siteId: number, tag: string, exceptId: number | null) {
  if (await repo.findLimitIdByTag(trx, siteId, tag, exceptId))
    throw new AppError(409, ErrorCode.CONFLICT, `Tag ${tag} is already used at this site`, {
      fields: { tag: ['Already used at this site'] },
    })
}

/**
 * Edits a draft (proposed) limit (the register's rule book, `edit`).
 * Active limits change only through a change request.
 */
export async function updateLimit(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  patch: UpdateLimitInput,
  expectedRevision?: number,
): Promise<Limit> {
  await deps.db.transaction().execute(async (trx) => {
    const before = readableRow(await loadLimit(trx, id, true), ability, 'Limit')
    enforce(limitRules(before, { ability }).edit)
    if (expectedRevision !== undefined && expectedRevision !== before.revision)
      throw new AppError(
        409,
        ErrorCode.CONFLICT,
        `Limit ${before.tag} was changed by someone else (revision ${before.revision}); reload it`,
      )
    await applyLimitDefinition(trx, deps.clock, ctx, before, patch, {
      changeRequestId: null,
      reason: 'draft edited',
      action: 'limit.update',
    })
  })
  return loadLimit(deps.db, id)
}

/**
 * Applies a new definition (and optionally a status) to a limit inside the caller's transaction: checks it, writes the
 * row, a revision and the audit event. Used for draft edits and by implemented change requests.
 */
export async function applyLimitDefinition(
  trx: Trx,
  clock: Clock,
  ctx: AuditContext,
  before: Limit,
  patch: UpdateLimitInput,
  opts: {
    changeRequestId: number | null
    reason: string | null
    action: string
    status?: Limit['status']
    batchId?: string
  },
): Promise<Limit> {
  const draft = CreateLimitInputSchema.parse({ ...toDraft(before), ...patch, processId: before.processId })
  if (draft.tag.toLowerCase() !== before.tag.toLowerCase())
    await assertTagFree(trx, before.siteId, draft.tag, before.id)
  const ev = await evaluateLimit(trx, draft, before.siteId, before.id)
  if (ev.errors.length && opts.status !== 'retired') throw windowError(ev)
  await repo.updateLimitRow(trx, before.id, {
    ...columns(draft, ev),
    revision: before.revision + 1,
    updated_at: clock.now(),
    ...(opts.status ? { status: opts.status } : {}),
  })
  if (patch.instrumentIds) await repo.replaceLimitInstruments(trx, before.id, draft.instrumentIds)
  const after = await loadLimit(trx, before.id)
  await writeRevision(trx, clock, after, ctx, opts.changeRequestId, opts.reason)
  await appendAudit(trx, clock, ctx, {
    action: opts.action,
    entityType: 'Limit',
    entityId: before.id,
    siteId: before.siteId,
    before: limitSnapshot(before),
    after: limitSnapshot(after),
    reason: opts.reason,
    batchId: opts.batchId,
  })
  return after
}

/** Loads a limit for update inside a transaction (for change requests). */
export function lockLimit(trx: Trx, id: number): Promise<Limit> {
  return loadLimit(trx, id, true)
}

export async function deleteLimit(deps: AppDeps, ability: AppAbility, ctx: AuditContext, id: number): Promise<void> {
  await deps.db.transaction().execute(async (trx) => {
    const before = readableRow(await loadLimit(trx, id, true), ability, 'Limit')
    enforce(limitRules(before, { ability }).delete)
    await repo.deleteLimitRow(trx, id)
    await appendAudit(trx, deps.clock, ctx, {
      action: 'limit.delete',
      entityType: 'Limit',
      entityId: id,
      siteId: before.siteId,
      before: limitSnapshot(before),
    })
  })
}

/**
 * Recomputes and stores the window results of every limit on an instrument (after the instrument changed), in the
 * caller's transaction. Returns the limits that would then have blocking errors.
 */
export async function recomputeWindowsForInstrument(
  trx: Trx,
  instrumentId: number,
): Promise<{ tag: string; errors: Evaluation['errors'] }[]> {
  const ids = await repo.findUnretiredLimitIdsOnInstrument(trx, instrumentId)
  const blocked: { tag: string; errors: Evaluation['errors'] }[] = []
  for (const { id } of ids) {
    const l = await loadLimit(trx, id)
    const ev = await evaluateLimit(trx, toDraft(l), l.siteId, l.id)
    if (ev.errors.length) blocked.push({ tag: l.tag, errors: ev.errors })
    await repo.updateLimitRow(trx, id, {
      window_errors: JSON.stringify(ev.errors),
      window_warnings: JSON.stringify(ev.warnings),
      priority: ev.priority,
      priority_explanation: ev.priorityExplanation,
    })
  }
  return blocked
}

export async function listRevisions(deps: AppDeps, ability: AppAbility, id: number) {
  const limit = await getLimit(deps, ability, id)
  const rows = await repo.listLimitRevisions(deps.db, limit.id)
  return {
    total: rows.length,
    items: rows.map((r, i) => {
      const prev = rows[i + 1]?.snapshot
      const snap = r.snapshot
      const changes = prev
        ? Object.keys(snap)
            .filter((k) => k !== 'revision' && JSON.stringify(snap[k]) !== JSON.stringify(prev[k]))
            .map((k) => ({ field: k, from: prev[k], to: snap[k] }))
        : []
      return {
        revision: r.revision,
        changedAt: r.changed_at.toISOString(),
        changedBy: r.display_name,
        changeRequestId: r.change_request_id,
        reason: r.reason,
        changes,
        snapshot: snap,
      }
    }),
  }
}

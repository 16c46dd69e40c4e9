import type { Transaction } from 'kysely'
import type { AppAbility } from '../../../shared/abilities/index.ts'
import { instrumentEditVerdict } from '../../../shared/domain/rules/limits.ts'
import { ErrorCode } from '../../../shared/errors.ts'
import {
  type CreateInstrumentInput,
  CreateInstrumentInputSchema,
  type Instrument,
} from '../../../shared/schemas/register.ts'
import { allows, authorize, readableRow } from '../../authorize.ts'
import type { Clock } from '../../clock.ts'
import type { AppDeps } from '../../deps.ts'
import type { Database } from '../../db/schema.ts'
import { AppError, enforce, notFound } from '../../errors.ts'
import { type AuditContext, appendAudit } from '../audit/audit.repository.ts'
import { recomputeWindowsForInstrument } from './limits.service.ts'
import { processForNew } from './processes.service.ts'
import * as repo from './instruments.repository.ts'
import { toInstrument } from './register.mappers.ts'

type Trx = Transaction<Database>
type InstrumentDto = ReturnType<typeof toInstrument>

function columns(d: CreateInstrumentInput) {
  return {
    tag: d.tag,
    measured_variable: d.measuredVariable,
    unit: d.unit,
    pressure_reference: d.measuredVariable === 'pressure' ? d.pressureReference : null,
    range_low: d.rangeLow,
    range_high: d.rangeHigh,
    normal_low: d.normalLow,
    normal_high: d.normalHigh,
    design_low: d.designLow,
    design_high: d.designHigh,
    burnout: d.burnout,
    signal: JSON.stringify(d.signal),
    device_kind: d.deviceKind,
    device_description: d.deviceDescription,
    model: d.model,
  }
}

async function load(db: AppDeps['db'] | Trx, id: number, lock = false): Promise<InstrumentDto> {
  const row = await repo.findInstrumentRow(db, id, lock)
  if (!row) throw notFound('Instrument')
  return toInstrument(row)
}

function snapshot(i: InstrumentDto) {
  const { updatedAt: _u, processName: _p, ...rest } = i
  return rest
}

async function assertTagFree(trx: Trx, siteId: number, tag: string, exceptId: number | null) {
  if (await repo.findInstrumentIdByTag(trx, siteId, tag, exceptId))
    throw new AppError(409, ErrorCode.CONFLICT, `Instrument tag ${tag} is already used at this site`, {
      fields: { tag: ['Already used at this site'] },
    })
}

export async function listInstruments(
  deps: AppDeps,
  ability: AppAbility,
  f: { siteIds: number[]; processIds?: number[]; q?: string; page: number; pageSize: number },
) {
  const { total, rows } = await repo.listInstrumentRows(deps.db, f)
  return {
    total,
    items: rows.map(toInstrument).filter((i) => allows(ability, 'read', 'Instrument', { siteId: i.siteId })),
  }
}

export async function getInstrument(deps: AppDeps, ability: AppAbility, id: number) {
  return readableRow(await load(deps.db, id), ability, 'Instrument')
}

export async function createInstrument(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  input: CreateInstrumentInput,
) {
  const process = await processForNew(deps, ability, input.processId)
  authorize(ability, 'create', 'Instrument', { siteId: process.site_id })
  const id = await deps.db.transaction().execute((trx) => insertInstrument(trx, deps.clock, ctx, input, process))
  return load(deps.db, id)
}

/** Inserts an instrument with its first revision and audit event (also used by the import). */
export async function insertInstrument(
  trx: Trx,
  clock: Clock,
  ctx: AuditContext,
  input: CreateInstrumentInput,
  process: { id: number; area_id: number; site_id: number },
  batchId?: string,
): Promise<number> {
  await assertTagFree(trx, process.site_id, input.tag, null)
  const now = clock.now()
  const id = await repo.insertInstrumentRow(trx, {
    ...columns(input),
    process_id: process.id,
    area_id: process.area_id,
    site_id: process.site_id,
    created_at: now,
    updated_at: now,
  })
  const dto = await load(trx, id)
  await repo.insertInstrumentRevision(trx, {
    instrument_id: id,
    revision: 1,
    snapshot: JSON.stringify(snapshot(dto)),
    changed_by: ctx.actorId,
    changed_at: now,
    change_request_id: null,
    reason: 'created',
  })
  await appendAudit(trx, clock, ctx, {
    action: 'instrument.create',
    entityType: 'Instrument',
    entityId: id,
    after: snapshot(dto),
    batchId,
  })
  return id
}

/**
 * Changes an instrument. While any active limit stands on it the change goes through a change request (a re-ranged
 * transmitter moves every trip on it); otherwise the window results of its limits are recomputed in the same
 * transaction and a blocking error refuses the change.
 */
export async function updateInstrument(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  patch: Partial<CreateInstrumentInput>,
) {
  await deps.db.transaction().execute(async (trx) => {
    const before = readableRow(await load(trx, id, true), ability, 'Instrument')
    const active = await repo.activeLimitTagsOnInstrument(trx, id)
    enforce(
      instrumentEditVerdict(
        before,
        active.map((a) => a.tag),
        { ability },
      ),
    )
    await applyInstrumentDefinition(trx, deps.clock, ctx, before, patch, { changeRequestId: null, reason: 'edited' })
  })
  return load(deps.db, id)
}

/** Writes a new instrument definition, its revision and audit event, and recomputes its limits' windows. */
export async function applyInstrumentDefinition(
  trx: Trx,
  clock: Clock,
  ctx: AuditContext,
  before: InstrumentDto,
  patch: Partial<CreateInstrumentInput>,
  opts: { changeRequestId: number | null; reason: string | null; batchId?: string },
) {
  const draft = CreateInstrumentInputSchema.parse({ ...snapshot(before), ...patch, processId: before.processId })
  if (draft.tag.toLowerCase() !== before.tag.toLowerCase())
    await assertTagFree(trx, before.siteId, draft.tag, before.id)
  await repo.updateInstrumentRow(trx, before.id, {
    ...columns(draft),
    revision: before.revision + 1,
    updated_at: clock.now(),
  })
  const blocked = await recomputeWindowsForInstrument(trx, before.id)
  if (blocked.length) {
    throw new AppError(
      422,
      ErrorCode.UNPROCESSABLE,
      'The change would put limits outside their operating window: ' +
        blocked.map((b) => `${b.tag} (${b.errors.map((e) => e.message).join('; ')})`).join(' · '),
      { limits: blocked },
    )
  }
  const after = await load(trx, before.id)
  await repo.insertInstrumentRevision(trx, {
    instrument_id: before.id,
    revision: after.revision,
    snapshot: JSON.stringify(snapshot(after)),
    changed_by: ctx.actorId,
    changed_at: clock.now(),
    change_request_id: opts.changeRequestId,
    reason: opts.reason,
  })
  await appendAudit(trx, clock, ctx, {
    action: 'instrument.update',
    entityType: 'Instrument',
    entityId: before.id,
    before: snapshot(before),
    after: snapshot(after),
    reason: opts.reason,
    batchId: opts.batchId,
  })
  return after
}

export const lockInstrument = (trx: Trx, id: number) => load(trx, id, true)
export type { Instrument }

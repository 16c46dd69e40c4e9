import type { AppAbility } from '../../../shared/abilities/index.ts'
import { ErrorCode } from '../../../shared/errors.ts'
import { allowedRow, allows, authorize, readableRow } from '../../authorize.ts'
import type { AppDeps } from '../../deps.ts'
import { AppError, validationFailed } from '../../errors.ts'
import { type AuditContext, appendAudit } from '../audit/audit.repository.ts'
import * as repo from './processes.repository.ts'
import { toProcess } from './register.mappers.ts'

export async function listProcesses(deps: AppDeps, ability: AppAbility, f: { siteIds: number[]; areaIds?: number[] }) {
  const items = (await repo.listProcessRows(deps.db, f.siteIds, f.areaIds))
    .map(toProcess)
    .filter((p) => allows(ability, 'read', 'Process', { siteId: p.siteId }))
  return { items, total: items.length }
}

/**
 * The process a new instrument or limit goes under, as the user may read it; another site's process answers as a
 * missing one (docs/security.md#authorization).
 */
export async function processForNew(deps: AppDeps, ability: AppAbility, processId: number) {
  const process = await repo.findProcessRow(deps.db, processId)
  if (!process || !allows(ability, 'read', 'Process', { siteId: process.site_id }))
    throw validationFailed({ processId: ['The process does not exist'] })
  return process
}

export async function getProcess(deps: AppDeps, ability: AppAbility, id: number) {
  const row = readableRow(await repo.findProcessRow(deps.db, id), ability, 'Process')
  return toProcess(row)
}

export async function createProcess(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  input: { areaId: number; name: string; description: string },
) {
  const area = await repo.findAreaRow(deps.db, input.areaId)
  // another site's area answers as a missing one (docs/security.md#authorization)
  if (!area || !allows(ability, 'read', 'Process', { siteId: area.site_id }))
    throw validationFailed({ areaId: ['The area does not exist'] })
  authorize(ability, 'create', 'Process', { siteId: area.site_id })
  return deps.db.transaction().execute(async (trx) => {
    const dup = await repo.findProcessIdByName(trx, area.id, input.name)
    if (dup)
      throw new AppError(409, ErrorCode.CONFLICT, 'This area has a process with this name already', {
        fields: { name: ['Already used in this area'] },
      })
    const now = deps.clock.now()
    const row = await repo.insertProcess(trx, {
      area_id: area.id,
      site_id: area.site_id,
      name: input.name,
      description: input.description,
      created_at: now,
      updated_at: now,
    })
    await appendAudit(trx, deps.clock, ctx, {
      action: 'process.create',
      entityType: 'Process',
      entityId: row.id,
      after: toProcess(row),
    })
    return toProcess(row)
  })
}

export async function updateProcess(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  input: { name?: string; description?: string },
) {
  return deps.db.transaction().execute(async (trx) => {
    const before = allowedRow(await repo.findProcessRow(trx, id, true), ability, 'update', 'Process')
    const row = await repo.updateProcessRow(trx, id, { ...input, updated_at: deps.clock.now() })
    await appendAudit(trx, deps.clock, ctx, {
      action: 'process.update',
      entityType: 'Process',
      entityId: id,
      before: toProcess(before),
      after: toProcess(row),
    })
    return toProcess(row)
  })
}

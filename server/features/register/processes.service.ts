import type { AppAbility } from '../../../shared/abilities/index.ts'
import { ErrorCode } from '../../../shared/errors.ts'
import { allows, authorize, ensureVisible } from '../../authorize.ts'
import type { AppDeps } from '../../deps.ts'
import { AppError, notFound, validationFailed } from '../../errors.ts'
import { type AuditContext, appendAudit } from '../audit/audit.repository.ts'
import { toProcess } from './register.mappers.ts'

export async function listProcesses(deps: AppDeps, ability: AppAbility, f: { siteIds: number[]; areaIds?: number[] }) {
  let q = deps.db
    .selectFrom('process')
    .selectAll()
    .where('site_id', 'in', f.siteIds.length ? f.siteIds : [-1])
  if (f.areaIds?.length) q = q.where('area_id', 'in', f.areaIds)
  const items = (await q.orderBy('name').execute())
    .map(toProcess)
    .filter((p) => allows(ability, 'read', 'Process', { siteId: p.siteId }))
  return { items, total: items.length }
}

export async function getProcess(deps: AppDeps, ability: AppAbility, id: number) {
  const row = await deps.db.selectFrom('process').selectAll().where('id', '=', id).executeTakeFirst()
  if (!row) throw notFound('Process')
  ensureVisible(ability, 'Process', { siteId: row.site_id }, 'Process')
  return toProcess(row)
}

export async function createProcess(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  input: { areaId: number; name: string; description: string },
) {
  const area = await deps.db.selectFrom('area').selectAll().where('id', '=', input.areaId).executeTakeFirst()
  // another site's area answers as a missing one (docs/security.md#authorization)
  if (!area || !allows(ability, 'read', 'Process', { siteId: area.site_id }))
    throw validationFailed({ areaId: ['The area does not exist'] })
  authorize(ability, 'create', 'Process', { siteId: area.site_id })
  return deps.db.transaction().execute(async (trx) => {
    const dup = await trx
      .selectFrom('process')
      .select('id')
      .where('area_id', '=', area.id)
      .where('name', '=', input.name)
      .executeTakeFirst()
    if (dup)
      throw new AppError(409, ErrorCode.CONFLICT, 'This area has a process with this name already', {
        fields: { name: ['Already used in this area'] },
      })
    const now = deps.clock.now()
    const row = await trx
      .insertInto('process')
      .values({
        area_id: area.id,
        site_id: area.site_id,
        name: input.name,
        description: input.description,
        created_at: now,
        updated_at: now,
      })
      .returningAll()
      .executeTakeFirstOrThrow()
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
    const before = await trx.selectFrom('process').selectAll().where('id', '=', id).forUpdate().executeTakeFirst()
    if (!before) throw notFound('Process')
    ensureVisible(ability, 'Process', { siteId: before.site_id }, 'Process')
    authorize(ability, 'update', 'Process', { siteId: before.site_id })
    const row = await trx
      .updateTable('process')
      .set({ ...input, updated_at: deps.clock.now() })
      .where('id', '=', id)
      .returningAll()
      .executeTakeFirstOrThrow()
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

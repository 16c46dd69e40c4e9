import type { AppAbility } from '../../../shared/abilities/index.ts'
import type { ListResult } from '../../../shared/schemas/common.ts'
import {
  type Area,
  DEFAULT_SITE_POLICY,
  type Site,
  type SitePolicy,
  SitePolicySchema,
} from '../../../shared/schemas/sites.ts'
import type { z } from 'zod'
import type {
  CreateAreaInputSchema,
  CreateSiteInputSchema,
  UpdateAreaInputSchema,
  UpdateSiteInputSchema,
} from '../../../shared/schemas/sites.ts'
import { allowedRow, allows, authorize, ensureVisible } from '../../authorize.ts'
import type { AppDeps } from '../../deps.ts'
import type { SiteRow } from '../../db/schema.ts'
import { conflict, notFound } from '../../errors.ts'
import { type AuditContext, appendAudit } from '../audit/audit.repository.ts'
import { markSiteSchedulesStale } from '../trip-tests/trip-tests.repository.ts'
import type { Db } from '../../db/index.ts'
import * as repo from './sites.repository.ts'
import { insertAdminRoles } from '../users/users.repository.ts'

/** A site's policy: stored overrides over the defaults of docs/conventions.md#site-policies. */
export function policyOf(row: Pick<SiteRow, 'policy'>): SitePolicy {
  return SitePolicySchema.parse({ ...DEFAULT_SITE_POLICY, ...(row.policy ?? {}) })
}

function toSite(row: SiteRow): Site {
  return { id: row.id, code: row.code, name: row.name, timeZone: row.time_zone, policy: policyOf(row) }
}

export async function getSitePolicy(db: Db, siteId: number): Promise<SitePolicy> {
  const row = await repo.findSitePolicyRow(db, siteId)
  if (!row) throw notFound('Site')
  return policyOf(row)
}

export async function listSites(deps: AppDeps, ability: AppAbility): Promise<ListResult<Site>> {
  const rows = await repo.listSiteRows(deps.db)
  const items = rows.filter((r) => allows(ability, 'read', 'Site', { id: r.id })).map(toSite)
  return { items, total: items.length }
}

export async function getSite(deps: AppDeps, ability: AppAbility, id: number): Promise<Site> {
  const row = await repo.findSiteRow(deps.db, id)
  if (!row) throw notFound('Site')
  ensureVisible(ability, 'Site', { id }, 'Site')
  return toSite(row)
}

export async function createSite(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  input: z.infer<typeof CreateSiteInputSchema>,
): Promise<Site> {
  authorize(ability, 'create', 'Site')
  const exists = await repo.findSiteIdByCode(deps.db, input.code)
  if (exists) throw conflict('A site with this code exists already', { fields: { code: ['Already in use'] } })
  const policy = { ...DEFAULT_SITE_POLICY, ...(input.policy ?? {}) }
  const row = await deps.db.transaction().execute(async (trx) => {
    const row = await repo.insertSite(trx, {
      code: input.code,
      name: input.name,
      time_zone: input.timeZone,
      policy: JSON.stringify(policy),
      created_at: deps.clock.now(),
    })
    // whoever creates a site administers it
    if (ctx.actorId) await insertAdminRoles(trx, ctx.actorId, [row.id])
    await appendAudit(trx, deps.clock, ctx, {
      action: 'site.create',
      entityType: 'Site',
      entityId: row.id,
      after: toSite(row),
    })
    return row
  })
  return toSite(row)
}

export async function updateSite(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  input: z.infer<typeof UpdateSiteInputSchema>,
): Promise<Site> {
  ensureVisible(ability, 'Site', { id }, 'Site')
  authorize(ability, 'update', 'Site', { id })
  const row = await deps.db.transaction().execute(async (trx) => {
    const before = await repo.findSiteRow(trx, id, true)
    if (!before) throw notFound('Site')
    const policy = { ...policyOf(before), ...(input.policy ?? {}) }
    const row = await repo.updateSiteRow(trx, id, {
      ...(input.name ? { name: input.name } : {}),
      ...(input.timeZone ? { time_zone: input.timeZone } : {}),
      policy: JSON.stringify(policy),
    })
    // grace and look-ahead follow the policy and dates the zone: the schedule job refreshes the site's limits
    if (input.policy || input.timeZone) await markSiteSchedulesStale(trx, id)
    await appendAudit(trx, deps.clock, ctx, {
      action: 'site.update',
      entityType: 'Site',
      entityId: id,
      before: toSite(before),
      after: toSite(row),
    })
    return row
  })
  return toSite(row)
}

export async function listAreas(deps: AppDeps, ability: AppAbility, siteIds?: number[]): Promise<ListResult<Area>> {
  const rows = await repo.listAreaRows(deps.db, siteIds)
  const items = rows
    .map((r) => ({ id: r.id, siteId: r.site_id, name: r.name }))
    .filter((a) => allows(ability, 'read', 'Area', a))
  return { items, total: items.length }
}

export async function createArea(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  input: z.infer<typeof CreateAreaInputSchema>,
): Promise<Area> {
  authorize(ability, 'create', 'Area', { siteId: input.siteId })
  return deps.db.transaction().execute(async (trx) => {
    const dup = await repo.findAreaIdByName(trx, input.siteId, input.name)
    if (dup) throw conflict('This site has an area with this name already', { fields: { name: ['Already in use'] } })
    const row = await repo.insertArea(trx, input.siteId, input.name)
    const area = { id: row.id, siteId: row.site_id, name: row.name }
    await appendAudit(trx, deps.clock, ctx, {
      action: 'area.create',
      entityType: 'Area',
      entityId: row.id,
      after: area,
    })
    return area
  })
}

export async function updateArea(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  input: z.infer<typeof UpdateAreaInputSchema>,
): Promise<Area> {
  return deps.db.transaction().execute(async (trx) => {
    const before = allowedRow(await repo.findAreaRowForUpdate(trx, id), ability, 'update', 'Area')
    const row = await repo.updateAreaName(trx, id, input.name)
    const area = { id: row.id, siteId: row.site_id, name: row.name }
    await appendAudit(trx, deps.clock, ctx, {
      action: 'area.update',
      entityType: 'Area',
      entityId: id,
      before: { name: before.name },
      after: { name: row.name },
    })
    return area
  })
}

import { Router } from 'express'
import { z } from 'zod'
import { IdSchema, ListQuerySchema } from '../../../shared/schemas/common.ts'
import { authorize, likeEscape } from '../../authorize.ts'
import type { AppDeps } from '../../deps.ts'

const AuditQuerySchema = ListQuerySchema.extend({
  entityType: z.string().max(60).optional(),
  entityId: z.string().max(60).optional(),
  actorId: IdSchema.optional(),
  action: z.string().max(80).optional(),
  from: z.iso.datetime({ offset: true }).optional(),
  to: z.iso.datetime({ offset: true }).optional(),
  cursor: IdSchema.optional(),
})

/** `GET /api/audit-events`: newest first, filtered; `cursor` (an id) pages without OFFSET. */
export function createAuditRouter(deps: AppDeps) {
  const router = Router()
  router.get('/', async (req, res) => {
    authorize(req.ability, 'read', 'AuditEvent')
    const q = AuditQuerySchema.parse(req.query)
    let base = deps.db.selectFrom('audit_event').leftJoin('app_user', 'app_user.id', 'audit_event.actor_id')
    if (q.entityType) base = base.where('audit_event.entity_type', '=', q.entityType)
    if (q.entityId) base = base.where('audit_event.entity_id', '=', q.entityId)
    if (q.actorId) base = base.where('audit_event.actor_id', '=', q.actorId)
    if (q.action) base = base.where('audit_event.action', 'like', `${q.action}%`)
    if (q.from) base = base.where('audit_event.occurred_at', '>=', new Date(q.from))
    if (q.to) base = base.where('audit_event.occurred_at', '<', new Date(q.to))
    if (q.q)
      base = base.where((eb) =>
        eb.or([
          eb('audit_event.action', 'ilike', `%${likeEscape(q.q!)}%`),
          eb('app_user.display_name', 'ilike', `%${likeEscape(q.q!)}%`),
        ]),
      )
    const total = (await base.select((eb) => eb.fn.countAll<number>().as('n')).executeTakeFirstOrThrow()).n
    let page = base
      .selectAll('audit_event')
      .select('app_user.display_name as actorName')
      .orderBy('audit_event.id', 'desc')
      .limit(q.pageSize)
    page = q.cursor ? page.where('audit_event.id', '<', q.cursor) : page.offset((q.page - 1) * q.pageSize)
    const rows = await page.execute()
    res.json({
      total,
      items: rows.map((r) => ({
        id: r.id,
        at: r.occurred_at.toISOString(),
        actorId: r.actor_id,
        actorName: r.actorName,
        action: r.action,
        entityType: r.entity_type,
        entityId: r.entity_id,
        before: r.before,
        after: r.after,
        reason: r.reason,
        batchId: r.batch_id,
        requestId: r.request_id,
        ip: r.ip,
        prevHash: r.prev_hash,
        hash: r.hash,
      })),
      nextCursor: rows.length === q.pageSize ? rows[rows.length - 1].id : null,
    })
  })
  return router
}

import { Router } from 'express'
import { z } from 'zod'
import { ListQuerySchema } from '../../../shared/schemas/common.ts'
import { authorize } from '../../authorize.ts'
import type { AppDeps } from '../../deps.ts'

/** `GET /api/mail` (admins): the outbox with delivery state, newest first. */
export function createMailRouter(deps: AppDeps) {
  const router = Router()
  router.get('/', async (req, res) => {
    authorize(req.ability, 'read', 'Mail')
    const q = ListQuerySchema.extend({ state: z.enum(['queued', 'sent', 'failing']).optional() }).parse(req.query)
    let base = deps.db.selectFrom('mail_outbox')
    if (q.state === 'sent') base = base.where('sent_at', 'is not', null)
    if (q.state === 'queued') base = base.where('sent_at', 'is', null).where('attempts', '=', 0)
    if (q.state === 'failing') base = base.where('sent_at', 'is', null).where('attempts', '>', 0)
    if (q.q) base = base.where((eb) => eb.or([eb('to_addr', 'ilike', `%${q.q}%`), eb('subject', 'ilike', `%${q.q}%`)]))
    const total = (await base.select((eb) => eb.fn.countAll<number>().as('n')).executeTakeFirstOrThrow()).n
    const rows = await base
      .selectAll()
      .orderBy('id', 'desc')
      .limit(q.pageSize)
      .offset((q.page - 1) * q.pageSize)
      .execute()
    res.json({
      total,
      items: rows.map((r) => ({
        id: r.id,
        to: r.to_addr,
        subject: r.subject,
        text: r.text_body,
        topic: r.topic,
        createdAt: r.created_at.toISOString(),
        attempts: r.attempts,
        nextAttemptAt: r.next_attempt_at.toISOString(),
        sentAt: r.sent_at?.toISOString() ?? null,
        lastError: r.last_error,
      })),
    })
  })
  return router
}

import { Router } from 'express'
import { MailListQuerySchema } from '../../../shared/schemas/mail.ts'
import { authorize } from '../../authorize.ts'
import type { AppDeps } from '../../deps.ts'
import { listOutbox } from './mail.service.ts'

/** `GET /api/mail` (admins): the outbox with delivery state, newest first. */
export function createMailRouter(deps: AppDeps) {
  const router = Router()
  router.get('/', async (req, res) => {
    // 403 before the query is read, whatever it holds
    authorize(req.ability, 'read', 'Mail')
    const q = MailListQuerySchema.parse(req.query)
    res.json(await listOutbox(deps, req.ability, q))
  })
  return router
}

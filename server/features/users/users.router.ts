import { Router } from 'express'
import { ListQuerySchema } from '../../../shared/schemas/common.ts'
import {
  ChangeOwnPasswordInputSchema,
  CreateUserInputSchema,
  UpdateUserInputSchema,
} from '../../../shared/schemas/users.ts'
import type { AppDeps } from '../../deps.ts'
import { patchOf, routeHandlers } from '../../route-handlers.ts'
import * as service from './users.service.ts'

/** `/api/users` (admins) and `/api/account/password` (everyone, their own). */
export function createUsersRouter(deps: AppDeps) {
  const router = Router()
  const route = routeHandlers(deps)
  router.get('/', async (req, res) => {
    res.json(await service.listUsers(deps, req.ability, ListQuerySchema.parse(req.query)))
  })
  router.get('/:id', route.read(service.getUser))
  router.post('/', route.create(CreateUserInputSchema, service.createUser))
  router.patch('/:id', route.act(patchOf(UpdateUserInputSchema), service.updateUser))
  return router
}

export function createAccountRouter(deps: AppDeps) {
  const router = Router()
  router.post('/password', async (req, res) => {
    const input = ChangeOwnPasswordInputSchema.parse(req.body)
    await service.changeOwnPassword(
      deps,
      req.audit,
      req.user!.id,
      input.currentPassword,
      input.newPassword,
      req.sessionID,
    )
    res.status(204).end()
  })
  return router
}

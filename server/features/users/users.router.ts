import { Router } from 'express'
import { IdSchema, ListQuerySchema, parsePatch } from '../../../shared/schemas/common.ts'
import {
  ChangeOwnPasswordInputSchema,
  CreateUserInputSchema,
  UpdateUserInputSchema,
} from '../../../shared/schemas/users.ts'
import type { AppDeps } from '../../deps.ts'
import * as service from './users.service.ts'

/** `/api/users` (admins) and `/api/account/password` (everyone, their own). */
export function createUsersRouter(deps: AppDeps) {
  const router = Router()
  router.get('/', async (req, res) => {
    res.json(await service.listUsers(deps, req.ability, ListQuerySchema.parse(req.query)))
  })
  router.get('/:id', async (req, res) => {
    res.json(await service.getUser(deps, req.ability, IdSchema.parse(req.params.id)))
  })
  router.post('/', async (req, res) => {
    res.status(201).json(await service.createUser(deps, req.ability, req.audit, CreateUserInputSchema.parse(req.body)))
  })
  router.patch('/:id', async (req, res) => {
    res.json(
      await service.updateUser(
        deps,
        req.ability,
        req.audit,
        IdSchema.parse(req.params.id),
        parsePatch(UpdateUserInputSchema, req.body),
      ),
    )
  })
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

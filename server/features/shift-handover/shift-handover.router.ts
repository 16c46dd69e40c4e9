import { Router } from 'express'
import { IdSchema } from '../../../shared/schemas/common.ts'
import {
  AcceptHandoverInputSchema,
  HandOverInputSchema,
  ShiftHandoverStateQuerySchema,
} from '../../../shared/schemas/shift-handover.ts'
import type { AppDeps } from '../../deps.ts'
import * as service from './shift-handover.service.ts'

/**
 * `GET /api/shift-handovers/state?areaId=` (the live state of protection of one or more areas of a site),
 * `POST /api/shift-handovers` (the outgoing shift supervisor hands over), `GET /api/shift-handovers/:id`,
 * `POST /api/shift-handovers/:id/acceptance` (the incoming shift supervisor accepts).
 */
export function createShiftHandoverRouter(deps: AppDeps) {
  const router = Router()
  router.get('/state', async (req, res) => {
    const q = ShiftHandoverStateQuerySchema.parse(req.query)
    res.json(await service.handoverState(deps, req.ability, req.audit, q.areaId))
  })
  router.post('/', async (req, res) => {
    res.status(201).json(await service.handOver(deps, req.ability, req.audit, HandOverInputSchema.parse(req.body)))
  })
  router.get('/:id', async (req, res) => {
    res.json(await service.getHandover(deps, req.ability, IdSchema.parse(req.params.id)))
  })
  router.post('/:id/acceptance', async (req, res) => {
    const b = AcceptHandoverInputSchema.parse(req.body)
    res.json(await service.acceptHandover(deps, req.ability, req.audit, IdSchema.parse(req.params.id), b))
  })
  return router
}

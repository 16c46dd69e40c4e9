import { Router } from 'express'
import {
  AcceptHandoverInputSchema,
  HandOverInputSchema,
  ShiftHandoverStateQuerySchema,
} from '../../../shared/schemas/shift-handover.ts'
import type { AppDeps } from '../../deps.ts'
import { routeHandlers } from '../../route-handlers.ts'
import * as service from './shift-handover.service.ts'

/**
 * `GET /api/shift-handovers/state?areaId=` (the live state of protection of one or more areas of a site),
 * `POST /api/shift-handovers` (the outgoing shift supervisor hands over), `GET /api/shift-handovers/:id`,
 * `POST /api/shift-handovers/:id/acceptance` (the incoming shift supervisor accepts).
 */
export function createShiftHandoverRouter(deps: AppDeps) {
  const router = Router()
  const route = routeHandlers(deps)
  router.get('/state', async (req, res) => {
    const q = ShiftHandoverStateQuerySchema.parse(req.query)
    res.json(await service.handoverState(deps, req.ability, req.audit, q.areaId))
  })
  router.post('/', route.create(HandOverInputSchema, service.handOver))
  router.get('/:id', route.read(service.getHandover))
  router.post('/:id/acceptance', route.act(AcceptHandoverInputSchema, service.acceptHandover))
  return router
}

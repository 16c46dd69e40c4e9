import { Router } from 'express'
import {
  ChangeProposalListQuerySchema,
  CreateChangeProposalInputSchema,
  DeclineProposalInputSchema,
  TakeUpProposalInputSchema,
} from '../../../shared/schemas/change-proposals.ts'
import { IdSchema } from '../../../shared/schemas/common.ts'
import { scopeSites } from '../../authorize.ts'
import type { AppDeps } from '../../deps.ts'
import { routeHandlers } from '../../route-handlers.ts'
import * as service from './change-proposals.service.ts'

/**
 * `/api/change-proposals` (docs/change-requests.md#change-proposals):
 * list (paged, by site, status, limit, mine), raise,
 * read, take up (`POST /:id/take-up { changeRequestId }`) and decline (`POST /:id/decline { reason }`).
 */
export function createChangeProposalsRouter(deps: AppDeps) {
  const router = Router()
  const id = (v: unknown) => IdSchema.parse(v)
  const route = routeHandlers(deps)
  router.get('/', async (req, res) => {
    const { siteId, ...q } = ChangeProposalListQuerySchema.parse(req.query)
    res.json(await service.listProposals(deps, req.user!.id, { ...q, siteIds: scopeSites(req.user, siteId) }))
  })
  router.post('/', route.create(CreateChangeProposalInputSchema, service.createProposal))
  router.get('/:id', route.read(service.getProposal))
  router.post('/:id/take-up', async (req, res) => {
    const b = TakeUpProposalInputSchema.parse(req.body)
    res.json(await service.takeUpProposal(deps, req.ability, req.audit, id(req.params.id), b.changeRequestId))
  })
  router.post('/:id/decline', async (req, res) => {
    const b = DeclineProposalInputSchema.parse(req.body)
    res.json(await service.declineProposal(deps, req.ability, req.audit, id(req.params.id), b.reason))
  })
  return router
}

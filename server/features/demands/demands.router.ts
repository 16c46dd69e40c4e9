import { Router } from 'express'
import { IdSchema } from '../../../shared/schemas/common.ts'
import {
  ClassifyDemandInputSchema,
  CreateDemandInputSchema,
  CreditDemandInputSchema,
  DemandAssumptionsInputSchema,
  DemandListQuerySchema,
  DemandRatesQuerySchema,
  FailureRatesQuerySchema,
  ProposeLambdaDuInputSchema,
} from '../../../shared/schemas/demands.ts'
import { scopeSites } from '../../authorize.ts'
import type { AppDeps } from '../../deps.ts'
import { validationFailed } from '../../errors.ts'
import { routeHandlers } from '../../route-handlers.ts'
import * as service from './demands.service.ts'
import { failureRates, proposeObservedLambdaDu } from './failure-rates.service.ts'

/** `/api/demands`: the demand and trip log; classification and credit as actions; `/rates` observed vs assumed. */
export function createDemandsRouter(deps: AppDeps) {
  const router = Router()
  const id = (v: unknown) => IdSchema.parse(v)
  const route = routeHandlers(deps)
  const byLimit = routeHandlers(deps, (req) => id(req.params.limitId))
  router.get('/', async (req, res) => {
    const q = DemandListQuerySchema.parse(req.query)
    res.json(
      await service.listDemands(
        deps,
        req.ability,
        req.user!.id,
        scopeSites(req.user, q.siteId),
        service.parseListQuery(q),
      ),
    )
  })
  router.get('/rates', async (req, res) => {
    const q = DemandRatesQuerySchema.parse(req.query)
    const to = q.to ? new Date(q.to) : deps.clock.now()
    const from = q.from ? new Date(q.from) : new Date(to.getTime() - 365 * 86_400_000)
    res.json(await service.demandRates(deps, scopeSites(req.user, q.siteId), { from, to }, q.limitId))
  })
  router.get('/failure-rates', async (req, res) => {
    const q = FailureRatesQuerySchema.parse(req.query)
    const to = q.to ? new Date(q.to) : deps.clock.now()
    const from = q.from ? new Date(q.from) : null
    if (from && !(from < to)) throw validationFailed({ from: ['The period must start before it ends'] })
    res.json(await failureRates(deps, scopeSites(req.user, q.siteId), { from, to }))
  })
  router.post('/failure-rates/change-request', async (req, res) => {
    res
      .status(201)
      .json(
        await proposeObservedLambdaDu(
          deps,
          req.ability,
          req.audit,
          scopeSites(req.user, undefined),
          ProposeLambdaDuInputSchema.parse(req.body),
        ),
      )
  })
  router.put('/assumptions/:limitId', byLimit.act(DemandAssumptionsInputSchema, service.setDemandAssumptions))
  router.get('/:id', async (req, res) => {
    res.json(await service.getDemand(deps, req.ability, req.user!.id, id(req.params.id)))
  })
  router.post('/', route.create(CreateDemandInputSchema, service.recordDemand))
  router.post('/:id/classification', route.act(ClassifyDemandInputSchema, service.classifyDemand))
  router.post('/:id/credit', route.act(CreditDemandInputSchema, service.creditDemand))
  return router
}

import { Router } from 'express'
import { SiteFilterQuerySchema } from '../../../shared/schemas/common.ts'
import {
  CreateAreaInputSchema,
  CreateSiteInputSchema,
  parseSitePatch,
  UpdateAreaInputSchema,
} from '../../../shared/schemas/sites.ts'
import type { AppDeps } from '../../deps.ts'
import { routeHandlers } from '../../route-handlers.ts'
import * as service from './sites.service.ts'

/** `/api/sites`: sites and their policies. */
export function createSitesRouter(deps: AppDeps) {
  const router = Router()
  const route = routeHandlers(deps)
  router.get('/', async (req, res) => {
    res.json(await service.listSites(deps, req.ability))
  })
  router.get('/:id', route.read(service.getSite))
  router.post('/', route.create(CreateSiteInputSchema, service.createSite))
  router.patch('/:id', route.act(parseSitePatch, service.updateSite))
  return router
}

/** `/api/areas`: the units of a site. */
export function createAreasRouter(deps: AppDeps) {
  const router = Router()
  const route = routeHandlers(deps)
  router.get('/', async (req, res) => {
    const { siteId } = SiteFilterQuerySchema.parse(req.query)
    res.json(await service.listAreas(deps, req.ability, siteId))
  })
  router.post('/', route.create(CreateAreaInputSchema, service.createArea))
  router.patch('/:id', route.act(UpdateAreaInputSchema, service.updateArea))
  return router
}

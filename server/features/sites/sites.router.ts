import { Router } from 'express'
import { IdSchema, SiteFilterQuerySchema } from '../../../shared/schemas/common.ts'
import {
  CreateAreaInputSchema,
  CreateSiteInputSchema,
  parseSitePatch,
  UpdateAreaInputSchema,
} from '../../../shared/schemas/sites.ts'
import type { AppDeps } from '../../deps.ts'
import * as service from './sites.service.ts'

/** `/api/sites`: sites and their policies. */
export function createSitesRouter(deps: AppDeps) {
  const router = Router()
  router.get('/', async (req, res) => {
    res.json(await service.listSites(deps, req.ability))
  })
  router.get('/:id', async (req, res) => {
    res.json(await service.getSite(deps, req.ability, IdSchema.parse(req.params.id)))
  })
  router.post('/', async (req, res) => {
    res.status(201).json(await service.createSite(deps, req.ability, req.audit, CreateSiteInputSchema.parse(req.body)))
  })
  router.patch('/:id', async (req, res) => {
    res.json(
      await service.updateSite(deps, req.ability, req.audit, IdSchema.parse(req.params.id), parseSitePatch(req.body)),
    )
  })
  return router
}

/** `/api/areas`: the units of a site. */
export function createAreasRouter(deps: AppDeps) {
  const router = Router()
  router.get('/', async (req, res) => {
    const { siteId } = SiteFilterQuerySchema.parse(req.query)
    res.json(await service.listAreas(deps, req.ability, siteId))
  })
  router.post('/', async (req, res) => {
    res.status(201).json(await service.createArea(deps, req.ability, req.audit, CreateAreaInputSchema.parse(req.body)))
  })
  router.patch('/:id', async (req, res) => {
    res.json(
      await service.updateArea(
        deps,
        req.ability,
        req.audit,
        IdSchema.parse(req.params.id),
        UpdateAreaInputSchema.parse(req.body),
      ),
    )
  })
  return router
}

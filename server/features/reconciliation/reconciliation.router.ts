import { Router } from 'express'
import { IdParamsSchema, IdSchema } from '../../../shared/schemas/common.ts'
import {
  AcceptInputSchema,
  AcknowledgeInputSchema,
  CreateSourceInputSchema,
  ExportUploadFieldsSchema,
  FindingFiguresQuerySchema,
  FindingListQuerySchema,
  LinkChangeInputSchema,
  RunListQuerySchema,
  RunNowInputSchema,
  SourceListQuerySchema,
  UpdateSourceInputSchema,
} from '../../../shared/schemas/reconciliation.ts'
import type { AppDeps } from '../../deps.ts'
import { patchOf, routeHandlers } from '../../route-handlers.ts'
import { validationFailed } from '../../errors.ts'
import { receiveFile } from '../register/imports.router.ts'
import * as findings from './findings.service.ts'
import * as runs from './reconciliation-runs.service.ts'
import * as sources from './reconciliation-sources.service.ts'

const id = (v: unknown) => IdSchema.parse(v)

/** `/api/reconciliation-sources`: sources with their register maps or column mappings; read now, run now, uploads. */
export function createReconciliationSourcesRouter(deps: AppDeps) {
  const router = Router()
  const route = routeHandlers(deps)
  router.get('/', async (req, res) => {
    res.json(await sources.listSources(deps, req.user!, SourceListQuerySchema.parse(req.query)))
  })
  router.post('/', route.create(CreateSourceInputSchema, sources.createSource))
  router.get('/:id', route.read(sources.getSource))
  router.patch('/:id', route.act(patchOf(UpdateSourceInputSchema.required({ version: true })), sources.updateSource))
  router.post('/:id/reads', route.act(sources.readNow))
  router.post('/:id/runs', async (req, res) => {
    RunNowInputSchema.parse(req.body ?? {})
    res.status(201).json(await sources.runNow(deps, req.ability, req.audit, id(req.params.id)))
  })
  router.post('/:id/exports', receiveFile, async (req, res) => {
    if (!req.file)
      throw validationFailed(
        { file: ['Attach the export (CSV or XLSX) in the form field "file"'] },
        'Attach the export (CSV or XLSX) in the form field "file"',
      )
    const fields = ExportUploadFieldsSchema.parse(req.body ?? {})
    const result = await sources.uploadExport(
      deps,
      req.ability,
      req.audit,
      id(req.params.id),
      { buffer: req.file.buffer, fileName: req.file.originalname },
      fields.mapping,
    )
    res.status(201).json(result)
  })
  return router
}

/** `/api/reconciliation-runs`: when, which source, counts. */
export function createReconciliationRunsRouter(deps: AppDeps) {
  const router = Router()
  router.get('/', async (req, res) => {
    res.json(await runs.listRuns(deps, req.ability, req.user!, RunListQuerySchema.parse(req.query)))
  })
  router.get('/:id', routeHandlers(deps).read(runs.getRun))
  return router
}

/** `/api/findings`: filters by site, source, kind, state, limit; acknowledge, link a change, accept (signed). */
export function createFindingsRouter(deps: AppDeps) {
  const router = Router()
  const route = routeHandlers(deps)
  router.get('/', async (req, res) => {
    res.json(await findings.listFindings(deps, req.ability, req.user!, FindingListQuerySchema.parse(req.query)))
  })
  router.get('/figures', async (req, res) => {
    res.json(await findings.findingFigures(deps, req.user!, FindingFiguresQuerySchema.parse(req.query)))
  })
  router.get('/:id', route.read(findings.getFinding))
  router.post('/:id/acknowledgement', async (req, res) => {
    const { version } = AcknowledgeInputSchema.parse(req.body)
    res.json(await findings.acknowledgeFinding(deps, req.ability, req.audit, id(req.params.id), version))
  })
  router.post('/:id/change-request', route.act(LinkChangeInputSchema, findings.linkChangeRequest))
  router.post('/:id/acceptance', route.act(AcceptInputSchema, findings.acceptFinding))
  return router
}

/** `/api/limits/:id/reconciliations`: the limit's last reconciliation per source. */
export function createLimitReconciliationsRouter(deps: AppDeps) {
  const router = Router({ mergeParams: true })
  router.get('/', async (req, res) => {
    res.json({ items: await findings.limitReconciliations(deps, req.ability, IdParamsSchema.parse(req.params).id) })
  })
  return router
}

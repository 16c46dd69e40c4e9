import { Router } from 'express'
import {
  ChangeListQuerySchema,
  ChangeRequestPatchSchema,
  ChecklistInputSchema,
  ChecklistItemSchema,
  ClosureInputSchema,
  CreateChangeRequestInputSchema,
  ImplementInputSchema,
  ReadBackCheckInputSchema,
  RejectInputSchema,
  ReviewInputSchema,
  SignInputSchema,
} from '../../../shared/schemas/change-requests.ts'
import { IdSchema, parsePatch } from '../../../shared/schemas/common.ts'
import { scopeSites } from '../../authorize.ts'
import type { AppDeps } from '../../deps.ts'
import { asDownload, routeHandlers } from '../../route-handlers.ts'
import { attachmentDownload, receiveAttachment } from '../attachments/attachments.ts'
import { changeRequestPdf } from './change-requests.pdf.ts'
import * as service from './change-requests.service.ts'

/** `/api/change-requests` with its actions as sub-resources (docs/change-requests.md). */
export function createChangeRequestsRouter(deps: AppDeps) {
  const router = Router()
  const id = (v: unknown) => IdSchema.parse(v)
  const route = routeHandlers(deps)

  router.get('/', async (req, res) => {
    const { siteId, ...q } = ChangeListQuerySchema.parse(req.query)
    res.json(await service.listChangeRequests(deps, req.user!, { ...q, siteIds: scopeSites(req.user, siteId) }))
  })
  router.get('/waiting-count', async (req, res) => {
    res.json({ count: await service.countWaiting(deps, req.user!) })
  })
  router.get('/:id', route.read(service.getChangeRequest))
  router.get('/:id/pdf', async (req, res) => {
    const cr = await service.getChangeRequest(deps, req.ability, id(req.params.id))
    const pdf = await changeRequestPdf(cr, deps.clock.now())
    asDownload(res, 'application/pdf', `change-request-${cr.id}.pdf`).send(pdf)
  })
  router.post('/', async (req, res) => {
    const newId = await service.createChangeRequest(
      deps,
      req.ability,
      req.audit,
      CreateChangeRequestInputSchema.parse(req.body),
    )
    res.status(201).json(await service.getChangeRequest(deps, req.ability, newId))
  })
  router.patch('/:id', async (req, res) => {
    const { version, ...patch } = parsePatch(ChangeRequestPatchSchema, req.body ?? {})
    res.json(await service.updateChangeRequest(deps, req.ability, req.audit, id(req.params.id), patch, version))
  })
  router.post('/:id/submission', route.act(service.submitChangeRequest))
  router.post('/:id/withdrawal', route.act(service.withdrawChangeRequest))
  router.post('/:id/approvals', route.act(SignInputSchema, service.approveChangeRequest))
  router.post('/:id/reviews', route.act(ReviewInputSchema, service.reviewChangeRequest))
  router.post('/:id/rejections', route.act(RejectInputSchema, service.rejectChangeRequest))
  router.post('/:id/implementations', route.act(ImplementInputSchema, service.implementChangeRequest))
  router.post('/:id/read-back-checks', route.act(ReadBackCheckInputSchema, service.checkItemReadBack))
  router.post('/:id/closure', async (req, res) => {
    const b = ClosureInputSchema.parse(req.body)
    res.json(await service.closeChangeRequest(deps, req.ability, req.audit, id(req.params.id), b.password, b.pssr))
  })
  router.put('/:id/checklist/:item', async (req, res) => {
    const item = ChecklistItemSchema.parse(req.params.item)
    const b = ChecklistInputSchema.parse(req.body)
    res.json(await service.tickChecklist(deps, req.ability, req.audit, id(req.params.id), item, b))
  })
  router.post('/:id/attachments', receiveAttachment, async (req, res) => {
    const att = await service.attachToChangeRequest(deps, req.ability, req.audit, id(req.params.id), req.file)
    res
      .status(201)
      .json({ id: att.id, fileName: att.file_name, contentType: att.content_type, sizeBytes: att.size_bytes })
  })
  router.get('/:id/attachments/:attachmentId', attachmentDownload(deps, 'ChangeRequest', service.getChangeRequest))
  return router
}

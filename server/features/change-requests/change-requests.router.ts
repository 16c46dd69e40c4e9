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
import { readAttachment, receiveAttachment } from '../attachments/attachments.ts'
import { changeRequestPdf } from './change-requests.pdf.ts'
import * as service from './change-requests.service.ts'

/** `/api/change-requests` with its actions as sub-resources (docs/change-requests.md). */
export function createChangeRequestsRouter(deps: AppDeps) {
  const router = Router()
  const id = (v: unknown) => IdSchema.parse(v)

  router.get('/', async (req, res) => {
    const { siteId, ...q } = ChangeListQuerySchema.parse(req.query)
    res.json(await service.listChangeRequests(deps, req.user!, { ...q, siteIds: scopeSites(req.user, siteId) }))
  })
  router.get('/waiting-count', async (req, res) => {
    res.json({ count: await service.countWaiting(deps, req.user!) })
  })
  router.get('/:id', async (req, res) => {
    res.json(await service.getChangeRequest(deps, req.ability, id(req.params.id)))
  })
  router.get('/:id/pdf', async (req, res) => {
    const cr = await service.getChangeRequest(deps, req.ability, id(req.params.id))
    const pdf = await changeRequestPdf(cr, deps.clock.now())
    res.setHeader('Content-Type', 'application/pdf')
    res.setHeader('Content-Disposition', `attachment; filename="change-request-${cr.id}.pdf"`)
    res.send(pdf)
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
  router.post('/:id/submission', async (req, res) => {
    res.json(await service.submitChangeRequest(deps, req.ability, req.audit, id(req.params.id)))
  })
  router.post('/:id/withdrawal', async (req, res) => {
    res.json(await service.withdrawChangeRequest(deps, req.ability, req.audit, id(req.params.id)))
  })
  router.post('/:id/approvals', async (req, res) => {
    const b = SignInputSchema.parse(req.body)
    res.json(await service.approveChangeRequest(deps, req.ability, req.audit, id(req.params.id), b))
  })
  router.post('/:id/reviews', async (req, res) => {
    const b = ReviewInputSchema.parse(req.body)
    res.json(await service.reviewChangeRequest(deps, req.ability, req.audit, id(req.params.id), b))
  })
  router.post('/:id/rejections', async (req, res) => {
    const b = RejectInputSchema.parse(req.body)
    res.json(await service.rejectChangeRequest(deps, req.ability, req.audit, id(req.params.id), b))
  })
  router.post('/:id/implementations', async (req, res) => {
    res.json(
      await service.implementChangeRequest(
        deps,
        req.ability,
        req.audit,
        id(req.params.id),
        ImplementInputSchema.parse(req.body),
      ),
    )
  })
  router.post('/:id/read-back-checks', async (req, res) => {
    res.json(
      await service.checkItemReadBack(
        deps,
        req.ability,
        req.audit,
        id(req.params.id),
        ReadBackCheckInputSchema.parse(req.body),
      ),
    )
  })
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
  router.get('/:id/attachments/:attachmentId', async (req, res) => {
    const crId = id(req.params.id)
    await service.getChangeRequest(deps, req.ability, crId)
    const a = await readAttachment(deps.db, 'ChangeRequest', crId, id(req.params.attachmentId))
    res.setHeader('Content-Type', a.content_type)
    res.setHeader('Content-Disposition', `attachment; filename="${a.file_name}"`)
    res.send(a.content)
  })
  return router
}

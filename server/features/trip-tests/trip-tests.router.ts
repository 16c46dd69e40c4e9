import { Router } from 'express'
import { toCsv } from '../../csv.ts'
import { IdParamsSchema, IdSchema, SiteFilterQuerySchema } from '../../../shared/schemas/common.ts'
import {
  DeadlineApprovalInputSchema,
  DigestRunInputSchema,
  DeferralDecisionInputSchema,
  DegradationMeasuresInputSchema,
  ScheduleQuerySchema,
  TestDeferralInputSchema,
  TestDeferralListQuerySchema,
  TripTestInputSchema,
  TripTestListQuerySchema,
  TripTestSignatureInputSchema,
} from '../../../shared/schemas/trip-tests.ts'
import { authorize, scopeSites } from '../../authorize.ts'
import type { AppDeps } from '../../deps.ts'
import { asDownload, routeHandlers } from '../../route-handlers.ts'
import { attachmentDownload, receiveAttachment, storeAttachment } from '../attachments/attachments.ts'
import { tripTestCertificate } from './trip-tests.pdf.ts'
import { runDigestForSite } from './trip-tests.jobs.ts'
import * as service from './trip-tests.service.ts'

/** `/api/trip-tests`: records, signatures, attachments, certificate, schedule, export and the digest on demand. */
export function createTripTestsRouter(deps: AppDeps) {
  const router = Router()
  const id = (v: unknown) => IdSchema.parse(v)
  const route = routeHandlers(deps)
  const listQuery = TripTestListQuerySchema

  router.get('/', async (req, res) => {
    const q = listQuery.parse(req.query)
    res.json(await service.listTripTests(deps, { ...q, siteIds: scopeSites(req.user, q.siteId) }))
  })
  router.get('/schedule', async (req, res) => {
    const q = ScheduleQuerySchema.parse(req.query)
    res.json(
      await service.schedule(deps, {
        siteIds: scopeSites(req.user, q.siteId),
        areaIds: q.areaId,
        status: q.status,
        late: q.late,
        limit: 2000,
      }),
    )
  })
  router.get('/export', async (req, res) => {
    const q = listQuery.parse(req.query)
    const { items } = await service.listTripTests(deps, {
      ...q,
      page: 1,
      pageSize: 100_000,
      siteIds: scopeSites(req.user, q.siteId),
    })
    const csv = toCsv(
      items.map((t) => ({
        Test: t.id,
        Limit: t.limitTag,
        Kind: t.kind,
        Method: t.method,
        'Performed (UTC)': t.performedAt,
        Setpoint: t.setpoint,
        'Tolerance ±': t.toleranceEu,
        'As found': t.asFound ?? 'no trip',
        'As-found result': t.asFoundResult,
        'As left': t.asLeft ?? '',
        'As-left result': t.asLeftResult,
        Passed: t.passed ? 'yes' : 'no',
        State: t.status,
        'Recorded by': t.recordedBy,
      })),
    )
    asDownload(res, 'text/csv; charset=utf-8', 'limitkeeper-trip-tests.csv').send(csv)
  })
  router.get('/overdue-repairs', async (req, res) => {
    const q = SiteFilterQuerySchema.parse(req.query)
    res.json({ items: await service.overdueRepairs(deps.db, scopeSites(req.user, q.siteId), deps.clock.now()) })
  })
  router.post('/digest-runs', async (req, res) => {
    const { siteId } = DigestRunInputSchema.parse(req.body)
    authorize(req.ability, 'update', 'Site', { id: siteId })
    res
      .status(201)
      .json(
        await runDigestForSite(
          deps.db,
          deps.config,
          deps.clock,
          siteId,
          `manual-${deps.clock.now().toISOString()}`,
          req.audit,
        ),
      )
  })
  router.get('/:id', async (req, res) => {
    res.json(await service.getTripTest(deps, req.ability, id(req.params.id), deps.db, req.audit))
  })
  router.post('/', route.create(TripTestInputSchema, service.createTripTest))
  router.put('/:id', route.act(TripTestInputSchema, service.updateTripTest))
  router.post('/:id/signatures', async (req, res) => {
    const b = TripTestSignatureInputSchema.parse(req.body)
    res.json(
      await service.signTripTest(deps, req.ability, req.audit, id(req.params.id), b.meaning, b.password, b.comment),
    )
  })
  router.get('/:id/certificate', async (req, res) => {
    const t = await service.getTripTest(deps, req.ability, id(req.params.id))
    const info = await service.certificateContext(deps, t.limitId)
    const pdf = await tripTestCertificate(t, { ...info, printedAt: deps.clock.now() })
    asDownload(res, 'application/pdf', `trip-test-${t.id}-${t.limitTag}.pdf`).send(pdf)
  })
  router.post('/:id/attachments', receiveAttachment, async (req, res) => {
    const att = await service.attachToTripTest(deps, req.ability, req.audit, id(req.params.id), (trx) =>
      storeAttachment(trx, deps.clock, req.file, {
        entityType: 'TripTest',
        entityId: id(req.params.id),
        userId: req.user!.id,
      }),
    )
    res.status(201).json(att)
  })
  router.get('/:id/attachments/:attachmentId', attachmentDownload(deps, 'TripTest', service.getTripTest))
  return router
}

/** `/api/limits/:id/degradation`: the degraded state's history and the supervisor's signed measures. */
export function createDegradationRouter(deps: AppDeps) {
  const router = Router({ mergeParams: true })
  // the limit's id, of the path this router is mounted on
  const route = routeHandlers(deps, (req) => IdParamsSchema.parse(req.params).id)
  router.get('/', async (req, res) => {
    res.json(await service.getDegradation(deps, req.ability, IdParamsSchema.parse(req.params).id, req.audit))
  })
  router.post('/', route.act(DegradationMeasuresInputSchema, service.signDegradationMeasures))
  router.post('/deadline-approval', route.act(DeadlineApprovalInputSchema, service.approveRepairDeadline))
  return router
}

/** `/api/test-deferrals`: deferrals of a limit's next full test; approval and rejection as signed actions. */
export function createTestDeferralsRouter(deps: AppDeps) {
  const router = Router()
  const id = (v: unknown) => IdSchema.parse(v)
  const route = routeHandlers(deps)
  router.get('/', async (req, res) => {
    const q = TestDeferralListQuerySchema.parse(req.query)
    res.json(
      await service.listDeferrals(deps, req.ability, req.audit, { ...q, siteIds: scopeSites(req.user, q.siteId) }),
    )
  })
  router.post('/', route.create(TestDeferralInputSchema, service.requestDeferral))
  router.get('/:id', async (req, res) => {
    res.json(await service.getDeferral(deps, req.ability, req.audit, id(req.params.id)))
  })
  for (const decision of ['approve', 'reject'] as const)
    router.post(`/:id/${decision === 'approve' ? 'approval' : 'rejection'}`, async (req, res) => {
      res.json(
        await service.decideDeferral(
          deps,
          req.ability,
          req.audit,
          id(req.params.id),
          decision,
          DeferralDecisionInputSchema.parse(req.body),
        ),
      )
    })
  return router
}

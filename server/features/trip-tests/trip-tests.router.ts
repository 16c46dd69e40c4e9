import { Router } from 'express'
import Papa from 'papaparse'
import { z } from 'zod'
import { IdSchema, repeated } from '../../../shared/schemas/common.ts'
import {
  DegradationMeasuresInputSchema,
  TripTestInputSchema,
  TripTestSignatureInputSchema,
} from '../../../shared/schemas/trip-tests.ts'
import { authorize, scopeSites } from '../../authorize.ts'
import type { AppDeps } from '../../deps.ts'
import { appendAudit } from '../audit/audit.repository.ts'
import { readAttachment, receiveAttachment, storeAttachment } from '../attachments/attachments.ts'
import { tripTestCertificate } from './trip-tests.pdf.ts'
import { runDigestForSite } from './trip-tests.jobs.ts'
import * as service from './trip-tests.service.ts'

/** `/api/trip-tests`: records, signatures, attachments, certificate, schedule, export and the digest on demand. */
export function createTripTestsRouter(deps: AppDeps) {
  const router = Router()
  const id = (v: unknown) => IdSchema.parse(v)
  const listQuery = z.object({
    siteId: repeated(IdSchema),
    limitId: IdSchema.optional(),
    passed: z
      .enum(['true', 'false'])
      .transform((v) => v === 'true')
      .optional(),
    page: z.coerce.number().int().min(1).default(1),
    pageSize: z.coerce.number().int().min(1).max(200).default(50),
  })

  router.get('/', async (req, res) => {
    const q = listQuery.parse(req.query)
    res.json(await service.listTripTests(deps, { ...q, siteIds: scopeSites(req.user, q.siteId) }))
  })
  router.get('/schedule', async (req, res) => {
    const q = z
      .object({
        siteId: repeated(IdSchema),
        areaId: repeated(IdSchema),
        status: repeated(z.enum(['never_tested', 'ok', 'due_soon', 'in_grace', 'overdue'])),
        late: z
          .enum(['true', 'false'])
          .transform((v) => v === 'true')
          .optional(),
      })
      .parse(req.query)
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
    const csv = Papa.unparse(
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
    res.setHeader('Content-Type', 'text/csv; charset=utf-8')
    res.setHeader('Content-Disposition', 'attachment; filename="limitkeeper-trip-tests.csv"')
    res.send(`\uFEFF${csv}`)
  })
  router.post('/digest-runs', async (req, res) => {
    const { siteId } = z.object({ siteId: z.number().int().positive() }).parse(req.body)
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
    res.json(await service.getTripTest(deps, req.ability, id(req.params.id)))
  })
  router.post('/', async (req, res) => {
    res
      .status(201)
      .json(await service.createTripTest(deps, req.ability, req.audit, TripTestInputSchema.parse(req.body)))
  })
  router.put('/:id', async (req, res) => {
    res.json(
      await service.updateTripTest(
        deps,
        req.ability,
        req.audit,
        id(req.params.id),
        TripTestInputSchema.parse(req.body),
      ),
    )
  })
  router.post('/:id/signatures', async (req, res) => {
    const b = TripTestSignatureInputSchema.parse(req.body)
    res.json(
      await service.signTripTest(deps, req.ability, req.audit, id(req.params.id), b.meaning, b.password, b.comment),
    )
  })
  router.get('/:id/certificate', async (req, res) => {
    const t = await service.getTripTest(deps, req.ability, id(req.params.id))
    const info = await deps.db
      .selectFrom('limit_function')
      .innerJoin('site', 'site.id', 'limit_function.site_id')
      .select(['site.name', 'site.time_zone', 'limit_function.description'])
      .where('limit_function.id', '=', t.limitId)
      .executeTakeFirstOrThrow()
    const pdf = await tripTestCertificate(t, {
      siteName: info.name,
      limitDescription: info.description,
      printedAt: deps.clock.now(),
      timeZone: info.time_zone,
    })
    res.setHeader('Content-Type', 'application/pdf')
    res.setHeader('Content-Disposition', `attachment; filename="trip-test-${t.id}-${t.limitTag}.pdf"`)
    res.send(pdf)
  })
  router.post('/:id/attachments', receiveAttachment, async (req, res) => {
    const testId = id(req.params.id)
    const t = await service.getTripTest(deps, req.ability, testId)
    authorize(req.ability, 'record', 'TripTest', { siteId: t.siteId })
    const att = await deps.db.transaction().execute(async (trx) => {
      const a = await storeAttachment(trx, deps.clock, req.file, {
        entityType: 'TripTest',
        entityId: testId,
        userId: req.user!.id,
      })
      await appendAudit(trx, deps.clock, req.audit, {
        action: 'trip_test.attach',
        entityType: 'TripTest',
        entityId: testId,
        after: {
          attachmentId: a.id,
          fileName: a.file_name,
          contentType: a.content_type,
          sizeBytes: a.size_bytes,
          sha256: a.sha256,
        },
      })
      return a
    })
    res
      .status(201)
      .json({ id: att.id, fileName: att.file_name, contentType: att.content_type, sizeBytes: att.size_bytes })
  })
  router.get('/:id/attachments/:attachmentId', async (req, res) => {
    const testId = id(req.params.id)
    await service.getTripTest(deps, req.ability, testId)
    const a = await readAttachment(deps.db, 'TripTest', testId, id(req.params.attachmentId))
    res.setHeader('Content-Type', a.content_type)
    res.setHeader('Content-Disposition', `attachment; filename="${a.file_name}"`)
    res.send(a.content)
  })
  return router
}

/** `/api/limits/:id/degradation`: the degraded state's history and the supervisor's signed measures. */
export function createDegradationRouter(deps: AppDeps) {
  const router = Router({ mergeParams: true })
  router.get('/', async (req, res) => {
    res.json(await service.getDegradation(deps, req.ability, IdSchema.parse((req.params as { id: string }).id)))
  })
  router.post('/', async (req, res) => {
    res.json(
      await service.signDegradationMeasures(
        deps,
        req.ability,
        req.audit,
        IdSchema.parse((req.params as { id: string }).id),
        DegradationMeasuresInputSchema.parse(req.body),
      ),
    )
  })
  return router
}

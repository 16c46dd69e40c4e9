import { brotliCompressSync, constants as zlibConstants, gzipSync } from 'node:zlib'
import { type Request, type Response, Router } from 'express'
import { IdSchema, parsePatch } from '../../../shared/schemas/common.ts'
import {
  CreateInstrumentInputSchema,
  CreateLimitInputSchema,
  CreateProcessInputSchema,
  ExpectedRevisionSchema,
  InstrumentListQuerySchema,
  LimitExportQuerySchema,
  type LimitListQuery,
  LimitListQuerySchema,
  ProcessListQuerySchema,
  ResponseSheetsQuerySchema,
  TestSignalQuerySchema,
  UpdateInstrumentInputSchema,
  UpdateLimitInputSchema,
  UpdateProcessInputSchema,
} from '../../../shared/schemas/register.ts'
import { scopeSites } from '../../authorize.ts'
import type { AppDeps } from '../../deps.ts'
import { asDownload, patchOf, routeHandlers } from '../../route-handlers.ts'
import { onReadStandby } from '../../db/read-standby.ts'
import * as instruments from './instruments.service.ts'
import * as limits from './limits.service.ts'
import * as processes from './processes.service.ts'
import * as register from './register.service.ts'
import * as sheets from './response-sheets.service.ts'

export function createProcessesRouter(deps: AppDeps) {
  const router = Router()
  const route = routeHandlers(deps)
  router.get('/', async (req, res) => {
    const q = ProcessListQuerySchema.parse(req.query)
    res.json(
      await processes.listProcesses(deps, req.ability, { siteIds: scopeSites(req.user, q.siteId), areaIds: q.areaId }),
    )
  })
  router.get('/:id', route.read(processes.getProcess))
  router.post('/', route.create(CreateProcessInputSchema, processes.createProcess))
  router.patch('/:id', route.act(patchOf(UpdateProcessInputSchema), processes.updateProcess))
  return router
}

export function createInstrumentsRouter(deps: AppDeps) {
  const router = Router()
  const route = routeHandlers(deps)
  router.get('/', async (req, res) => {
    const q = InstrumentListQuerySchema.parse(req.query)
    res.json(
      await instruments.listInstruments(deps, req.ability, {
        ...q,
        siteIds: scopeSites(req.user, q.siteId),
        processIds: q.processId,
      }),
    )
  })
  router.get('/:id', route.read(instruments.getInstrument))
  router.post('/', route.create(CreateInstrumentInputSchema, instruments.createInstrument))
  router.patch('/:id', route.act(patchOf(UpdateInstrumentInputSchema), instruments.updateInstrument))
  return router
}

/**
 * The register list's query, checked once per distinct query string: the register screen asks the same few pages over
 * and over, and the answer of the schema depends on the query string alone.
 */
const listQueries = new Map<string, LimitListQuery>()
function listQueryOf(req: Request): LimitListQuery {
  const at = req.originalUrl.indexOf('?')
  const raw = at < 0 ? '' : req.originalUrl.slice(at + 1)
  const known = listQueries.get(raw)
  if (known) return known
  const q = LimitListQuerySchema.parse(req.query)
  if (listQueries.size >= 1000) listQueries.clear()
  listQueries.set(raw, q)
  return q
}

export function createLimitsRouter(deps: AppDeps) {
  const router = Router()
  const route = routeHandlers(deps)
  router.get('/', async (req, res) => {
    const query = listQueryOf(req)
    const page = await onReadStandby(deps, (d) => register.listRegister(d, req.user, query))
    if ('page' in page) sendRegisterPage(req, res, page.page)
    else res.json(page)
  })
  router.get('/export', async (req, res) => {
    const { format, ...query } = LimitExportQuerySchema.parse(req.query)
    const file = await onReadStandby(deps, (d) => register.exportRegister(d, req.user, query, format))
    asDownload(res, file.contentType, file.fileName).send(file.body)
  })
  router.get('/:id', route.read(limits.getLimit))
  router.get('/:id/response-sheet', async (req, res) => {
    const { pdf, tag } = await sheets.responseSheet(deps, req.ability, IdSchema.parse(req.params.id))
    sendPdf(res, pdf, `alarm-response-sheet-${tag}.pdf`)
  })
  router.get('/:id/revisions', route.read(limits.listRevisions))
  router.get('/:id/test-signal', async (req, res) => {
    const q = TestSignalQuerySchema.parse(req.query)
    res.json(await register.testSignalFor(deps, req.ability, IdSchema.parse(req.params.id), q))
  })
  router.post('/', route.create(CreateLimitInputSchema, limits.createLimit))
  router.patch('/:id', async (req, res) => {
    const { expectedRevision } = ExpectedRevisionSchema.parse({ expectedRevision: req.body?.expectedRevision })
    const { expectedRevision: _e, ...patch } = req.body ?? {}
    res.json(
      await limits.updateLimit(
        deps,
        req.ability,
        req.audit,
        IdSchema.parse(req.params.id),
        parsePatch(UpdateLimitInputSchema, patch),
        expectedRevision,
      ),
    )
  })
  router.delete('/:id', async (req, res) => {
    await limits.deleteLimit(deps, req.ability, req.audit, IdSchema.parse(req.params.id))
    res.status(204).end()
  })
  return router
}

/**
 * Sends a register page as kept by the register's cache: its ETag (a 304 when the client has it), and the brotli or
 * gzip form the client accepts, compressed once per page rather than per request (docs/architecture.md, "The register
 * list query").
 */
function sendRegisterPage(req: Request, res: Response, page: register.RegisterPage) {
  res.type('application/json')
  res.vary('Accept-Encoding')
  res.setHeader('ETag', page.etag)
  const encoding = page.json.length >= 1024 ? req.acceptsEncodings('br', 'gzip') : false
  if (encoding !== 'br' && encoding !== 'gzip') return res.send(page.json)
  if (req.fresh) return res.status(304).end()
  const body = (page.encoded[encoding] ??=
    encoding === 'br'
      ? brotliCompressSync(page.json, { params: { [zlibConstants.BROTLI_PARAM_QUALITY]: 5 } })
      : gzipSync(page.json))
  res.setHeader('Content-Encoding', encoding)
  res.send(body)
}

/** Sends a generated PDF as a download; the file name is made of tags and site codes only. */
function sendPdf(res: Response, pdf: Buffer, fileName: string) {
  asDownload(res, 'application/pdf', fileName.replace(/[^A-Za-z0-9._-]/g, '_')).send(pdf)
}

/** `/api/alarm-response-sheets?siteId=…&areaId=…`: the booklet of the active alarms and alerts, one page each. */
export function createResponseSheetsRouter(deps: AppDeps) {
  const router = Router()
  router.get('/', async (req, res) => {
    const q = ResponseSheetsQuerySchema.parse(req.query)
    const { pdf, where } = await sheets.responseBooklet(deps, req.ability, q)
    sendPdf(res, pdf, `alarm-response-sheets-${where}.pdf`)
  })
  return router
}

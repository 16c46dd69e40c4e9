import { randomUUID } from 'node:crypto'
import { rm } from 'node:fs/promises'
import { tmpdir } from 'node:os'
import { type RequestHandler, Router } from 'express'
import multer from 'multer'
import {
  AlarmFiguresQuerySchema,
  AlarmReportQuerySchema,
  AlarmStateEndSchema,
  AlarmStateInputSchema,
  AlarmStateListQuerySchema,
  JournalListQuerySchema,
  JournalUploadFieldsSchema,
  ReplayListQuerySchema,
  ReplayRunInputSchema,
  ReplayUploadFieldsSchema,
} from '../../../shared/schemas/alarms.ts'
import { IdSchema } from '../../../shared/schemas/common.ts'
import { ErrorCode } from '../../../shared/errors.ts'
import type { AppDeps } from '../../deps.ts'
import { allowedTo, asDownload, routeHandlers } from '../../route-handlers.ts'
import { onReadStandby } from '../../db/read-standby.ts'
import { AppError, validationFailed } from '../../errors.ts'
import { alarmFigures, monthlyReport } from './alarm-figures.service.ts'
import * as journals from './alarm-journals.service.ts'
import * as states from './alarm-states.service.ts'
import * as replays from './replays.service.ts'

// `/api/alarm-journals`, `/api/alarm-figures`, `/api/alarm-states`, `/api/replays` (docs/api.md, docs/alarms.md).

/** Receives one large file to a temporary file on disk (never into memory), within the configured size. */
function diskUpload(deps: AppDeps): RequestHandler {
  const maxBytes = Math.floor(deps.config.ALARM_UPLOAD_MAX_MB * 1024 * 1024)
  const upload = multer({
    storage: multer.diskStorage({
      destination: tmpdir(),
      filename: (_req, _file, cb) => cb(null, `limitkeeper-upload-${randomUUID()}`),
    }),
    limits: { fileSize: maxBytes, files: 1, fields: 10, fieldSize: 64 * 1024, parts: 12 },
    defParamCharset: 'utf8',
  }).single('file')
  return (req, res, next) => {
    upload(req, res, (err: unknown) => {
      if (!err) return next()
      if (req.file?.path) void rm(req.file.path, { force: true })
      if (err instanceof multer.MulterError && err.code === 'LIMIT_FILE_SIZE')
        return next(
          new AppError(
            413,
            ErrorCode.VALIDATION_FAILED,
            `The file is larger than ${deps.config.ALARM_UPLOAD_MAX_MB} MB`,
            {
              fields: { file: ['Too large'] },
            },
          ),
        )
      const message = err instanceof Error ? err.message : 'unreadable form data'
      next(validationFailed({ file: [message] }, `The upload could not be read: ${message}`))
    })
  }
}

/** Parses the form fields with the file on disk, removing the file when they are refused. */
async function withFile<T>(
  req: Parameters<RequestHandler>[0],
  what: string,
  parse: () => T,
): Promise<T & { path: string; fileName: string }> {
  if (!req.file)
    throw validationFailed(
      { file: [`Attach the ${what} in the form field "file"`] },
      `Attach the ${what} in the form field "file"`,
    )
  try {
    return { ...parse(), path: req.file.path, fileName: req.file.originalname }
  } catch (err) {
    await rm(req.file.path, { force: true })
    throw err
  }
}

export function createAlarmJournalsRouter(deps: AppDeps) {
  const router = Router()
  const mayImport = allowedTo('import', 'AlarmJournal')
  router.get('/', async (req, res) => {
    const q = JournalListQuerySchema.parse(req.query)
    res.json(await journals.listJournalUploads(deps, req.user, q))
  })
  router.get('/mapping', mayImport, async (req, res) => {
    res.json({ mapping: await journals.rememberedMapping(deps, req.user!.id) })
  })
  router.get('/:id', routeHandlers(deps).read(journals.getJournalUpload))
  router.post('/', mayImport, diskUpload(deps), async (req, res) => {
    const f = await withFile(req, 'alarm journal (CSV or XLSX)', () => JournalUploadFieldsSchema.parse(req.body ?? {}))
    const upload = await journals.startJournalUpload(
      deps,
      req.ability,
      req.audit,
      req.user!.id,
      { path: f.path, fileName: f.fileName },
      f,
    )
    res.status(202).json(upload)
  })
  return router
}

export function createAlarmFiguresRouter(deps: AppDeps) {
  const router = Router()
  router.get('/', async (req, res) => {
    res.json(await onReadStandby(deps, (d) => alarmFigures(d, req.ability, AlarmFiguresQuerySchema.parse(req.query))))
  })
  router.get('/report.pdf', async (req, res) => {
    const { pdf, fileName } = await onReadStandby(deps, (d) =>
      monthlyReport(d, req.ability, AlarmReportQuerySchema.parse(req.query)),
    )
    asDownload(res, 'application/pdf', fileName).send(pdf)
  })
  return router
}

export function createAlarmStatesRouter(deps: AppDeps) {
  const router = Router()
  router.get('/', async (req, res) => {
    res.json(await states.listAlarmStates(deps, req.user!, AlarmStateListQuerySchema.parse(req.query)))
  })
  router.get('/:id', async (req, res) => {
    res.json(await states.getAlarmState(deps, req.ability, req.user!, IdSchema.parse(req.params.id)))
  })
  router.post('/', async (req, res) => {
    const input = AlarmStateInputSchema.parse(req.body)
    res.status(201).json(await states.startAlarmState(deps, req.ability, req.audit, req.user!, input))
  })
  router.post('/:id/end', async (req, res) => {
    const { note } = AlarmStateEndSchema.parse(req.body)
    res.json(await states.endAlarmState(deps, req.ability, req.audit, req.user!, IdSchema.parse(req.params.id), note))
  })
  return router
}

export function createReplaysRouter(deps: AppDeps) {
  const router = Router()
  const mayCreate = allowedTo('create', 'Replay')
  router.get('/', async (req, res) => {
    res.json(await replays.listReplayUploads(deps, req.user, ReplayListQuerySchema.parse(req.query)))
  })
  router.get('/:id', routeHandlers(deps).read(replays.getReplayUpload))
  router.post('/', mayCreate, diskUpload(deps), async (req, res) => {
    const f = await withFile(req, 'process-data export (CSV or XLSX)', () =>
      ReplayUploadFieldsSchema.parse(req.body ?? {}),
    )
    res
      .status(202)
      .json(
        await replays.startReplayUpload(
          deps,
          req.ability,
          req.audit,
          req.user!.id,
          { path: f.path, fileName: f.fileName },
          f,
        ),
      )
  })
  router.post('/:id/run', async (req, res) => {
    res.json(
      await replays.runReplay(
        deps,
        req.ability,
        IdSchema.parse(req.params.id),
        ReplayRunInputSchema.parse(req.body ?? {}),
      ),
    )
  })
  return router
}

import { type Request, type RequestHandler, Router } from 'express'
import multer from 'multer'
import { ErrorCode } from '../../../shared/errors.ts'
import { IMPORT_MAX_BYTES, ImportUploadFieldsSchema } from '../../../shared/schemas/imports.ts'
import type { AppAbility } from '../../../shared/abilities/index.ts'
import type { AppDeps } from '../../deps.ts'
import { allowedTo, routeHandlers } from '../../route-handlers.ts'
import { AppError, validationFailed } from '../../errors.ts'
import type { AuditContext } from '../audit/audit.repository.ts'
import * as imports from './imports.service.ts'

const upload = multer({
  storage: multer.memoryStorage(),
  limits: { fileSize: IMPORT_MAX_BYTES, files: 1, fields: 10, fieldSize: 64 * 1024, parts: 12 },
  defParamCharset: 'utf8',
}).single('file')

/** multer's failures as API errors (413 for a file over the size cap, 400 for anything else about the upload). */
function uploadError(err: unknown): AppError {
  if (err instanceof multer.MulterError) {
    if (err.code === 'LIMIT_FILE_SIZE') {
      return new AppError(
        413,
        ErrorCode.VALIDATION_FAILED,
        `The file is larger than ${IMPORT_MAX_BYTES / 1024 / 1024} MB: split the register, e.g. by area`,
        { fields: { file: ['Too large'] } },
      )
    }
    if (err.code === 'LIMIT_UNEXPECTED_FILE' || err.code === 'LIMIT_FILE_COUNT') {
      return validationFailed(
        { file: ['Send one file, in the form field "file"'] },
        'Send one file, in the form field "file"',
      )
    }
    return validationFailed({ file: [err.message] }, `The upload could not be read: ${err.message}`)
  }
  const message = err instanceof Error ? err.message : 'unreadable form data'
  return validationFailed({ file: [message] }, `The upload could not be read: ${message}`)
}

export const receiveFile: RequestHandler = (req, res, next) => {
  upload(req, res, (err: unknown) => next(err ? uploadError(err) : undefined))
}

/** The file of an import upload as the import services read it; 400 naming the `kind` of file when none came. */
function uploadedFile(req: Request, kind: string): { buffer: Buffer; fileName: string } {
  if (!req.file) {
    const message = `Attach the ${kind} (CSV or XLSX) in the form field "file"`
    throw validationFailed({ file: [message] }, message)
  }
  return { buffer: req.file.buffer, fileName: req.file.originalname }
}

/** Refuses users who may import nowhere before reading up to 5 MB of their upload. */
const mayImport = allowedTo('import', 'Limit')

type ChecksFile<F> = (
  deps: AppDeps,
  ability: AppAbility,
  audit: AuditContext,
  userId: number,
  file: { buffer: Buffer; fileName: string },
  fields: F,
) => Promise<unknown>
type CommitsBatch = (deps: AppDeps, ability: AppAbility, audit: AuditContext, id: number) => Promise<unknown>

/**
 * The routes of a spreadsheet import, for users who may import somewhere: `POST /` uploads a `kind` of file with its
 * form fields for `check` (a dry run, or committed at once with `dryRun=false`), answered 201; `POST /:id/commit`
 * commits a checked batch.
 */
export function importRouter<F>(
  deps: AppDeps,
  kind: string,
  fields: { parse(body: unknown): F },
  check: ChecksFile<F>,
  commit: CommitsBatch,
) {
  const router = Router()
  router.post('/', mayImport, receiveFile, async (req, res) => {
    const file = uploadedFile(req, kind)
    res.status(201).json(await check(deps, req.ability, req.audit, req.user!.id, file, fields.parse(req.body ?? {})))
  })
  router.post('/:id/commit', mayImport, routeHandlers(deps).act(commit))
  return router
}

/**
 * `/api/imports`: upload a register file for a dry run (`POST /`), then commit the batch (`POST /:id/commit`); the
 * user's remembered column mapping (`GET /mapping`).
 */
export function createImportsRouter(deps: AppDeps) {
  const router = importRouter(
    deps,
    'register file',
    ImportUploadFieldsSchema,
    imports.checkImport,
    imports.commitImport,
  )
  router.get('/mapping', mayImport, async (req, res) => {
    res.json({ mapping: await imports.getRememberedMapping(deps, req.user!.id) })
  })
  return router
}

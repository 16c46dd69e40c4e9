import { createHash } from 'node:crypto'
import type { RequestHandler } from 'express'
import multer from 'multer'
import type { Transaction } from 'kysely'
import type { Clock } from '../../clock.ts'
import type { Db } from '../../db/index.ts'
import type { Database } from '../../db/schema.ts'
import type { AppDeps } from '../../deps.ts'
import { asDownload } from '../../route-handlers.ts'
import type { AppAbility } from '../../../shared/abilities/index.ts'
import { IdSchema } from '../../../shared/schemas/common.ts'
import { ErrorCode } from '../../../shared/errors.ts'
import { AppError, notFound, validationFailed } from '../../errors.ts'
import { findAttachment, insertAttachment, listAttachments } from './attachments.repository.ts'

/** Largest attachment (10 MB). */
export const MAX_ATTACHMENT_BYTES = 10 * 1024 * 1024

/** multer in memory with the size limit; the type is checked from the content afterwards. */
export const attachmentUpload = multer({
  storage: multer.memoryStorage(),
  limits: { fileSize: MAX_ATTACHMENT_BYTES, files: 1 },
})

/**
 * The file's real type from its first bytes (PDF, PNG, JPEG), whatever its name or the browser says;
 * null otherwise.
 */
export function sniffType(buf: Buffer): 'application/pdf' | 'image/png' | 'image/jpeg' | null {
  if (buf.length >= 5 && buf.subarray(0, 5).toString('latin1') === '%PDF-') return 'application/pdf'
  if (buf.length >= 8 && buf.subarray(0, 8).equals(Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a])))
    return 'image/png'
  if (buf.length >= 3 && buf[0] === 0xff && buf[1] === 0xd8 && buf[2] === 0xff) return 'image/jpeg'
  return null
}

const EXTENSION: Record<NonNullable<ReturnType<typeof sniffType>>, string> = {
  'application/pdf': '.pdf',
  'image/png': '.png',
  'image/jpeg': '.jpg',
}

/**
 * The name an attachment is stored and served under: the client's name made safe, its extension replaced by the one
 * of the type judged from the content, so a PDF sent as `x.html` is kept and downloaded as `x.pdf` (docs/security.md,
 * "Attachments").
 */
export function storedFileName(clientName: string, type: NonNullable<ReturnType<typeof sniffType>>): string {
  const safe = clientName.replace(/[^\w.\- ()]/g, '_')
  const dot = safe.lastIndexOf('.')
  const given = dot >= 0 ? safe.slice(dot).toLowerCase() : ''
  // .jpeg is as right as .jpg for a JPEG; every other extension gives way to the judged one
  const ext = type === 'image/jpeg' && given === '.jpeg' ? given : EXTENSION[type]
  const stem = (dot >= 0 ? safe.slice(0, dot) : safe).replace(/^[.\s]+|[.\s]+$/g, '').slice(0, 150 - ext.length)
  return `${stem || 'attachment'}${ext}`
}

/**
 * Receives one attachment in field `file`; multer's failures as API errors
 * (413 over the size limit, 400 for anything else).
 */
export const receiveAttachment: RequestHandler = (req, res, next) => {
  attachmentUpload.single('file')(req, res, (err: unknown) => {
    if (!err) return next()
    if (err instanceof multer.MulterError && err.code === 'LIMIT_FILE_SIZE') {
      return next(
        new AppError(
          413,
          ErrorCode.VALIDATION_FAILED,
          `The file is larger than ${MAX_ATTACHMENT_BYTES / 1024 / 1024} MB`,
          { fields: { file: ['Too large'] } },
        ),
      )
    }
    const message = err instanceof Error ? err.message : 'unreadable form data'
    next(validationFailed({ file: [message] }, `The upload could not be read: ${message}`))
  })
}

/** Checks and stores an uploaded file in PostgreSQL, in the caller's transaction. */
export async function storeAttachment(
  trx: Transaction<Database>,
  clock: Clock,
  file: Express.Multer.File | undefined,
  owner: { entityType: string; entityId: number; userId: number },
) {
  if (!file || !file.buffer?.length)
    throw new AppError(400, ErrorCode.VALIDATION_FAILED, 'Choose a file to attach', {
      fields: { file: ['Choose a file'] },
    })
  const type = sniffType(file.buffer)
  if (!type)
    throw new AppError(
      400,
      ErrorCode.VALIDATION_FAILED,
      'Only PDF, PNG and JPEG files can be attached (checked by content)',
      { fields: { file: ['Not a PDF, PNG or JPEG file'] } },
    )
  const name = storedFileName(file.originalname, type)
  return insertAttachment(trx, {
    entity_type: owner.entityType,
    entity_id: owner.entityId,
    file_name: name,
    content_type: type,
    size_bytes: file.buffer.length,
    sha256: createHash('sha256').update(file.buffer).digest('hex'),
    content: file.buffer,
    uploaded_by: owner.userId,
    uploaded_at: clock.now(),
  })
}

/** What the audit record of an attachment holds about the stored file. */
export function attachmentFacts(a: {
  id: number
  file_name: string
  content_type: string
  size_bytes: number
  sha256: string
}) {
  return {
    attachmentId: a.id,
    fileName: a.file_name,
    contentType: a.content_type,
    sizeBytes: a.size_bytes,
    sha256: a.sha256,
  }
}

// the queries are in attachments.repository.ts; callers import the list from here as before
export { listAttachments }

async function readAttachment(db: Db, entityType: string, entityId: number, id: number) {
  const row = await findAttachment(db, entityType, entityId, id)
  if (!row) throw notFound('Attachment')
  return row
}

/**
 * `GET /:id/attachments/:attachmentId`: a file attached to a record, as a download, once `readRecord` (the record's
 * service read, which refuses with 404 or 403) has shown that the user may read the record.
 */
export function attachmentDownload(
  deps: AppDeps,
  entityType: string,
  readRecord: (deps: AppDeps, ability: AppAbility, id: number) => Promise<unknown>,
): RequestHandler {
  return async (req, res) => {
    const recordId = IdSchema.parse(req.params.id)
    await readRecord(deps, req.ability, recordId)
    const a = await readAttachment(deps.db, entityType, recordId, IdSchema.parse(req.params.attachmentId))
    asDownload(res, a.content_type, a.file_name).send(a.content)
  }
}

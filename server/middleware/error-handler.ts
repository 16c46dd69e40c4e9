import { ForbiddenError } from '@casl/ability'
import type { ErrorRequestHandler } from 'express'
import { ZodError } from 'zod'
import { ErrorCode } from '../../shared/errors.ts'
import { AppError } from '../errors.ts'

/** Turns a ZodError into field messages keyed by dotted path (`signal.tcType`). */
export function zodFields(err: ZodError): Record<string, string[]> {
  const fields: Record<string, string[]> = {}
  for (const issue of err.issues) {
    const key = issue.path.map(String).join('.') || '_'
    ;(fields[key] ??= []).push(issue.message)
  }
  return fields
}

/** The single error handler, registered last: every error becomes `{ error: { code, message, details? } }`. */
export const errorHandler: ErrorRequestHandler = (err, req, res, _next) => {
  if (err instanceof AppError) {
    res
      .status(err.status)
      .json({ error: { code: err.code, message: err.message, ...(err.details ? { details: err.details } : {}) } })
    return
  }
  if (err instanceof ZodError) {
    res.status(400).json({
      error: {
        code: ErrorCode.VALIDATION_FAILED,
        message: 'Some fields need attention',
        details: { fields: zodFields(err) },
      },
    })
    return
  }
  if (err instanceof ForbiddenError) {
    res
      .status(403)
      .json({ error: { code: ErrorCode.FORBIDDEN, message: err.message || 'You are not allowed to do this' } })
    return
  }
  const e = err as { type?: string; status?: number; code?: string }
  if (e?.type === 'entity.parse.failed') {
    res
      .status(400)
      .json({ error: { code: ErrorCode.VALIDATION_FAILED, message: 'The request body is not valid JSON' } })
    return
  }
  if (e?.type === 'entity.too.large') {
    res.status(413).json({ error: { code: ErrorCode.VALIDATION_FAILED, message: 'The request body is too large' } })
    return
  }
  if (e?.code === '40001' || e?.code === '23505') {
    res.status(409).json({
      error: {
        code: ErrorCode.CONFLICT,
        message: 'Someone else changed this at the same time; reload and try again',
      },
    })
    return
  }
  console.error(`[${req.id}]`, err)
  res.status(500).json({
    error: { code: ErrorCode.INTERNAL, message: 'Something went wrong on the server; the change was not saved' },
  })
}

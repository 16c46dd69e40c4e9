import { ForbiddenError } from '@casl/ability'
import type { ErrorRequestHandler } from 'express'
import { ZodError } from 'zod'
import { ErrorCode } from '../../shared/errors.ts'
import { errorField, isConnectionError } from '../db/index.ts'
import { AppError } from '../errors.ts'
import { logger } from '../logger.ts'

/** Turns a ZodError into field messages keyed by dotted path (`signal.tcType`). */
export function zodFields(err: ZodError): Record<string, string[]> {
  const fields: Record<string, string[]> = {}
  for (const issue of err.issues) {
    const key = issue.path.map(String).join('.') || '_'
    ;(fields[key] ??= []).push(issue.message)
  }
  return fields
}

// SQLSTATE codes of class 22 (data exception) and 54001 (statement too complex) that only a client's value causes
// (PostgreSQL manual, appendix A): they answer 400. Every other database error stays a 500 and is logged.
const DATA_ERRORS = new Set(['22P02', '22003', '22021', '22P05', '22007', '22008', '22023', '2201B', '22025', '54001'])

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
  const type = errorField(err, 'type')
  const code = errorField(err, 'code')
  if (type === 'entity.parse.failed') {
    res
      .status(400)
      .json({ error: { code: ErrorCode.VALIDATION_FAILED, message: 'The request body is not valid JSON' } })
    return
  }
  if (type === 'entity.too.large') {
    res.status(413).json({ error: { code: ErrorCode.VALIDATION_FAILED, message: 'The request body is too large' } })
    return
  }
  if (code === '40001' || code === '23505') {
    res.status(409).json({
      error: {
        code: ErrorCode.CONFLICT,
        message: 'Someone else changed this at the same time; reload and try again',
      },
    })
    return
  }
  if (isConnectionError(err)) {
    // the database is away (restart, failover): nothing was committed; the client may try again shortly
    res.setHeader('Retry-After', '5')
    res.status(503).json({
      error: {
        code: ErrorCode.SERVICE_UNAVAILABLE,
        message: 'The database cannot be reached just now; nothing was saved. Try again in a moment',
      },
    })
    return
  }
  if (DATA_ERRORS.has(code)) {
    // a value PostgreSQL refuses as data (out of range, bad text): the client sent it, so it is a 400, never a 500
    res
      .status(400)
      .json({ error: { code: ErrorCode.VALIDATION_FAILED, message: 'A value in the request is not valid' } })
    return
  }
  ;(req.log ?? logger).error({ err, requestId: req.id }, 'unexpected error')
  res.status(500).json({
    error: { code: ErrorCode.INTERNAL, message: 'Something went wrong on the server; the change was not saved' },
  })
}

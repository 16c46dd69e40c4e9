import { ErrorCode } from '../shared/errors.ts'
import type { Verdict } from '../shared/domain/rules/verdict.ts'

/** An error that maps to one API error answer. */
export class AppError extends Error {
  constructor(
    readonly status: number,
    readonly code: ErrorCode,
    message: string,
    readonly details?: Record<string, unknown>,
  ) {
    super(message)
  }
}

export const notFound = (what: string) => new AppError(404, ErrorCode.NOT_FOUND, `${what} not found`)
export const forbidden = (message = 'You are not allowed to do this') => new AppError(403, ErrorCode.FORBIDDEN, message)
export const conflict = (message: string, details?: Record<string, unknown>) =>
  new AppError(409, ErrorCode.CONFLICT, message, details)
export const invalidState = (message: string) => new AppError(409, ErrorCode.INVALID_STATE, message)
export const unprocessable = (message: string, details?: Record<string, unknown>) =>
  new AppError(422, ErrorCode.UNPROCESSABLE, message, details)
export const validationFailed = (fields: Record<string, string[]>, message = 'Some fields need attention') =>
  new AppError(400, ErrorCode.VALIDATION_FAILED, message, { fields })

/**
 * Throws the refusal of a workflow rule book (shared/domain/rules/) as its API answer: 403 for role or separation
 * of duties, 409 for the record's state or the clock, 422 for a value the rules refuse. Does nothing when allowed.
 */
export function enforce(verdict: Verdict): void {
  if (verdict.allowed) return
  if (verdict.status === 403) throw forbidden(verdict.reason)
  if (verdict.status === 422) throw unprocessable(verdict.reason)
  throw invalidState(verdict.reason)
}

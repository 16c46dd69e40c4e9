import type { RequestHandler } from 'express'
import { inputProblem } from '../../shared/schemas/common.ts'
import { validationFailed } from '../errors.ts'

/**
 * The first check of every API request, before any router: the path, the query and the JSON body must hold only
 * text PostgreSQL can store (no NUL, no lone surrogate) and nest at most MAX_INPUT_DEPTH levels. Anything else is a
 * 400 naming the field, so no bad byte reaches a query, a jsonb column or the audit trail (docs/security.md).
 */
export const inputGuard: RequestHandler = (req, _res, next) => {
  let path: string
  try {
    path = decodeURIComponent(req.path)
  } catch {
    return next(
      validationFailed({ _: ['The address is not valid (bad percent-encoding)'] }, 'The address is not valid'),
    )
  }
  const problem =
    inputProblem(path) ?? inputProblem(req.query) ?? (req.body === undefined ? null : inputProblem(req.body))
  if (problem) return next(validationFailed({ [problem.path]: [problem.message] }, problem.message))
  next()
}

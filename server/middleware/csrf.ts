import { randomBytes, timingSafeEqual } from 'node:crypto'
import type { Request, RequestHandler } from 'express'
import { ErrorCode } from '../../shared/errors.ts'
import { AppError } from '../errors.ts'

/** The session's synchronizer token (OWASP CSRF cheat sheet), created on first use. */
export function csrfTokenFor(req: Request): string {
  req.session.csrfToken ??= randomBytes(32).toString('base64url')
  return req.session.csrfToken
}

const SAFE = new Set(['GET', 'HEAD', 'OPTIONS'])

/** Every state-changing request carries the token in X-CSRF-Token, sign-in included. */
export const requireCsrf: RequestHandler = (req, _res, next) => {
  if (SAFE.has(req.method)) return next()
  const sent = req.get('x-csrf-token') ?? ''
  const expected = req.session?.csrfToken ?? ''
  const a = Buffer.from(sent)
  const b = Buffer.from(expected)
  if (!expected || a.length !== b.length || !timingSafeEqual(a, b)) {
    return next(
      new AppError(
        403,
        ErrorCode.CSRF_INVALID,
        'The page is out of date (security token missing or wrong); reload and try again',
      ),
    )
  }
  next()
}

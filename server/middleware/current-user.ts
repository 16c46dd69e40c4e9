import { randomUUID } from 'node:crypto'
import type { RequestHandler } from 'express'
import { createAppAbility, defineRulesFor } from '../../shared/abilities/index.ts'
import { ErrorCode } from '../../shared/errors.ts'
import type { AppDeps } from '../deps.ts'
import { AppError } from '../errors.ts'
import { findRolesByUserIds, findUserById } from '../features/users/users.repository.ts'

/**
 * Loads the signed-in user and their roles on every request (a deactivated account or a changed role takes effect at
 * once), enforces the idle and absolute session lifetimes on the injected clock, and builds the CASL ability.
 */
export function currentUser(deps: AppDeps): RequestHandler {
  return async (req, _res, next) => {
    req.id = (req.get('x-request-id') ?? '').slice(0, 64) || randomUUID()
    req.user = null
    req.audit = { actorId: null, requestId: req.id, ip: req.ip ?? null }
    const s = req.session
    if (s?.userId) {
      const now = deps.clock.now().getTime()
      const idleMs = deps.config.SESSION_IDLE_MINUTES * 60_000
      const absMs = deps.config.SESSION_ABSOLUTE_HOURS * 3_600_000
      const expired = (s.lastSeenAt && now - s.lastSeenAt > idleMs) || (s.signedInAt && now - s.signedInAt > absMs)
      const user = expired ? undefined : await findUserById(deps.db, s.userId)
      if (!user || !user.active) {
        await new Promise<void>((resolve, reject) => s.regenerate((err) => (err ? reject(err) : resolve())))
        // GET /api/session answers anonymously (with a new CSRF token) so the client can offer sign-in again
        if (expired && req.baseUrl + req.path !== '/api/session') {
          return next(new AppError(401, ErrorCode.SESSION_EXPIRED, 'Your session has ended; sign in again'))
        }
      } else {
        // written at most once a minute: an unchanged session is not saved again on every request
        if (!s.lastSeenAt || now - s.lastSeenAt >= 60_000) s.lastSeenAt = now
        const roles = (await findRolesByUserIds(deps.db, [user.id])).get(user.id) ?? []
        req.user = { id: user.id, email: user.email, displayName: user.display_name, roles }
        req.audit.actorId = user.id
      }
    }
    req.ability = createAppAbility(defineRulesFor(req.user))
    next()
  }
}

/** 401 unless signed in. */
export const requireUser: RequestHandler = (req, _res, next) => {
  if (!req.user) return next(new AppError(401, ErrorCode.UNAUTHENTICATED, 'Sign in first'))
  next()
}

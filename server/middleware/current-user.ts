import { randomUUID } from 'node:crypto'
import type { RequestHandler } from 'express'
import { createAppAbility, defineRulesFor } from '../../shared/abilities/index.ts'
import { ErrorCode } from '../../shared/errors.ts'
import type { AppDeps } from '../deps.ts'
import { AppError } from '../errors.ts'
import { ChangeCache, changeFeedOf } from '../db/change-feed.ts'
import { findUserWithRoles } from '../features/users/users.repository.ts'

/**
 * Loads the signed-in user and their roles on every request (a deactivated account or a changed role takes effect at
 * once), enforces the idle and absolute session lifetimes on the injected clock, and builds the CASL ability.
 */
export function currentUser(deps: AppDeps): RequestHandler {
  // the account, its roles and its ability, kept per process until the account or its roles change
  // (docs/architecture.md, "Caches and change notifications")
  const feed = changeFeedOf(deps.pool)
  const users = new ChangeCache<Awaited<ReturnType<typeof loadUser>>>(feed, 60_000)
  feed?.subscribe((change) => {
    if (change === '*' || change === 'user:*') users.drop()
    else if (change.startsWith('user:')) users.drop(change.slice('user:'.length))
  })
  const anonymous = createAppAbility(defineRulesFor(null))
  async function loadUser(id: number) {
    const row = await findUserWithRoles(deps.db, id)
    if (!row) return null
    const user = { id: row.id, email: row.email, displayName: row.display_name, roles: row.roles }
    return { active: row.active, user, ability: createAppAbility(defineRulesFor(user)) }
  }
  return async (req, _res, next) => {
    req.id = (typeof req.id === 'string' && req.id) || (req.get('x-request-id') ?? '').slice(0, 64) || randomUUID()
    req.user = null
    req.audit = { actorId: null, requestId: req.id, ip: req.ip ?? null }
    const s = req.session
    if (s?.userId) {
      const now = deps.clock.now().getTime()
      const idleMs = deps.config.SESSION_IDLE_MINUTES * 60_000
      const absMs = deps.config.SESSION_ABSOLUTE_HOURS * 3_600_000
      const expired = (s.lastSeenAt && now - s.lastSeenAt > idleMs) || (s.signedInAt && now - s.signedInAt > absMs)
      const found = expired ? undefined : await users.getOrLoad(String(s.userId), () => loadUser(s.userId!))
      if (!found || !found.active) {
        await new Promise<void>((resolve, reject) => s.regenerate((err) => (err ? reject(err) : resolve())))
        // GET /api/session answers anonymously (with a new CSRF token) so the client can offer sign-in again
        if (expired && req.baseUrl + req.path !== '/api/session') {
          return next(new AppError(401, ErrorCode.SESSION_EXPIRED, 'Your session has ended; sign in again'))
        }
      } else {
        // written at most once a minute: an unchanged session is not saved again on every request
        if (!s.lastSeenAt || now - s.lastSeenAt >= 60_000) s.lastSeenAt = now
        req.user = found.user
        req.ability = found.ability
        req.audit.actorId = found.user.id
        return next()
      }
    }
    req.ability = anonymous
    next()
  }
}

/** 401 unless signed in. */
export const requireUser: RequestHandler = (req, _res, next) => {
  if (!req.user) return next(new AppError(401, ErrorCode.UNAUTHENTICATED, 'Sign in first'))
  next()
}

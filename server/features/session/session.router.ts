import { Router } from 'express'
import { defineRulesFor } from '../../../shared/abilities/index.ts'
import { SignInInputSchema } from '../../../shared/schemas/users.ts'
import type { AppDeps } from '../../deps.ts'
import { csrfTokenFor } from '../../middleware/csrf.ts'
import type { CurrentUser } from '../../types/express.d.ts'
import { recordSignOut, signIn } from './session.service.ts'

function sessionBody(user: CurrentUser | null, csrfToken: string) {
  return { user, rules: defineRulesFor(user), csrfToken }
}

/** `/api/session`: who is signed in (anonymous too: the CSRF token), sign in, sign out. */
export function createSessionRouter(deps: AppDeps) {
  const router = Router()

  router.get('/', (req, res) => {
    res.json(sessionBody(req.user, csrfTokenFor(req)))
  })

  router.post('/', async (req, res) => {
    const input = SignInInputSchema.parse(req.body)
    const user = await signIn(deps, input, req.audit)
    // a new session id at sign-in (session fixation), with a fresh CSRF token
    await new Promise<void>((resolve, reject) => req.session.regenerate((err) => (err ? reject(err) : resolve())))
    const now = deps.clock.now().getTime()
    req.session.userId = user.id
    req.session.signedInAt = now
    req.session.lastSeenAt = now
    const token = csrfTokenFor(req)
    await new Promise<void>((resolve, reject) => req.session.save((err) => (err ? reject(err) : resolve())))
    res.status(201).json(sessionBody(user, token))
  })

  router.delete('/', async (req, res) => {
    if (req.user) await recordSignOut(deps, req.audit, req.user.id)
    await new Promise<void>((resolve, reject) => req.session.destroy((err) => (err ? reject(err) : resolve())))
    res.clearCookie('limitkeeper.sid')
    res.status(204).end()
  })

  return router
}

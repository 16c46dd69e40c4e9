import { ErrorCode } from '../../../shared/errors.ts'
import type { SignInInput } from '../../../shared/schemas/users.ts'
import type { AppDeps } from '../../deps.ts'
import { AppError } from '../../errors.ts'
import { type AuditContext, appendAudit, appendAuditAlone } from '../audit/audit.repository.ts'
import type { AuditEntityType } from '../audit/audit.sites.ts'
import { findRolesByUserIds, findUserByEmail, findUserById } from '../users/users.repository.ts'
import type { CurrentUser } from '../../types/express.d.ts'
import { verifyPassword } from './passwords.ts'
import { recordAttempt } from './session.repository.ts'
import { reserveAttempt } from './throttle.ts'

const GENERIC = 'E-mail address or password is wrong'

/** Checks e-mail and password; records the attempt and an audit event either way. */
export async function signIn(deps: AppDeps, input: SignInInput, ctx: AuditContext): Promise<CurrentUser> {
  const { db, clock } = deps
  const ip = ctx.ip ?? 'unknown'
  // counted before argon2 runs: 40 parallel guesses get at most the limit's worth of checks
  const reservation = await reserveAttempt(deps, input.email, ip)
  const user = await findUserByEmail(db, input.email)
  const ok = await verifyPassword(user?.password_hash ?? null, input.password)
  const success = Boolean(user && ok && user.active)
  await reservation.release(success)
  await db.transaction().execute(async (trx) => {
    await recordAttempt(trx, { at: clock.now(), email: input.email, ip, success, purpose: 'sign_in' })
    await appendAudit(
      trx,
      clock,
      { ...ctx, actorId: success ? user!.id : null },
      {
        action: success ? 'session.sign_in' : 'session.sign_in_failed',
        entityType: 'User',
        entityId: user?.id ?? null,
        after: {
          email: input.email,
          ...(success ? {} : { why: !user ? 'unknown account' : !ok ? 'wrong password' : 'account inactive' }),
        },
      },
    )
  })
  if (!success) throw new AppError(401, ErrorCode.INVALID_CREDENTIALS, GENERIC)
  const roles = (await findRolesByUserIds(db, [user!.id])).get(user!.id) ?? []
  return { id: user!.id, email: user!.email, displayName: user!.display_name, roles }
}

/**
 * Re-checks the signed-in user's password for an electronic signature (21 CFR 11.200). A wrong password answers 403
 * SIGNATURE_INVALID, writes the failed attempt (it counts against the sign-in limit) and its audit event, nothing else.
 */
export async function verifySignaturePassword(
  deps: AppDeps,
  userId: number,
  password: string,
  ctx: AuditContext,
  what: { entityType: AuditEntityType; entityId: string | number; siteId?: number },
) {
  const { db, clock } = deps
  const user = await findUserById(db, userId)
  if (!user || !user.active) throw new AppError(401, ErrorCode.UNAUTHENTICATED, 'Sign in again')
  const ip = ctx.ip ?? 'unknown'
  const reservation = await reserveAttempt(deps, user.email, ip)
  const ok = await verifyPassword(user.password_hash, password)
  await reservation.release(ok)
  if (!ok) {
    await db.transaction().execute(async (trx) => {
      await recordAttempt(trx, { at: clock.now(), email: user.email, ip, success: false, purpose: 'signature' })
      await appendAudit(trx, clock, ctx, {
        action: 'signature.failed',
        entityType: what.entityType,
        entityId: what.entityId,
        ...(what.siteId !== undefined ? { siteId: what.siteId } : {}),
      })
    })
    throw new AppError(403, ErrorCode.SIGNATURE_INVALID, 'The password is wrong; nothing was signed')
  }
  return { id: user.id, name: user.display_name }
}

/** Audit event for signing out. */
export function recordSignOut(deps: AppDeps, ctx: AuditContext, userId: number) {
  return appendAuditAlone(deps.db, deps.clock, ctx, {
    action: 'session.sign_out',
    entityType: 'User',
    entityId: userId,
  })
}

import { ErrorCode } from '../../../shared/errors.ts'
import type { ListQuery, ListResult } from '../../../shared/schemas/common.ts'
import type { CreateUserInput, UpdateUserInput, User } from '../../../shared/schemas/users.ts'
import { allows, authorize } from '../../authorize.ts'
import type { AppDeps } from '../../deps.ts'
import type { AppUserRow } from '../../db/schema.ts'
import { AppError, conflict, notFound, validationFailed } from '../../errors.ts'
import type { AppAbility } from '../../../shared/abilities/index.ts'
import { type AuditContext, appendAudit } from '../audit/audit.repository.ts'
import { hashPassword, verifyPassword } from '../session/passwords.ts'
import { deleteSessionsOfUser, recordAttempt } from '../session/session.repository.ts'
import { reserveAttempt } from '../session/throttle.ts'
import { assertStrongPassword } from './password-policy.ts'
import * as repo from './users.repository.ts'
import { findSiteIds } from '../sites/sites.repository.ts'

type RoleList = User['roles']

function toUser(row: AppUserRow, roles: RoleList): User {
  return {
    id: row.id,
    email: row.email,
    displayName: row.display_name,
    active: row.active,
    roles,
    createdAt: row.created_at.toISOString(),
  }
}

export async function listUsers(deps: AppDeps, ability: AppAbility, q: ListQuery): Promise<ListResult<User>> {
  authorize(ability, 'read', 'User', { id: -1 })
  const rows = await repo.listUsers(deps.db, { q: q.q, limit: q.pageSize, offset: (q.page - 1) * q.pageSize })
  const roles = await repo.findRolesByUserIds(
    deps.db,
    rows.map((r) => r.id),
  )
  return { items: rows.map((r) => toUser(r, roles.get(r.id) ?? [])), total: await repo.countUsers(deps.db, q.q) }
}

/**
 * One account. The right to read it is checked before the lookup, so a user who may read only their own account gets
 * the same 403 for another account's id whether it exists or not (docs/security.md#authorization).
 */
export async function getUser(deps: AppDeps, ability: AppAbility, id: number): Promise<User> {
  authorize(ability, 'read', 'User', { id })
  const row = await repo.findUserById(deps.db, id)
  if (!row) throw notFound('User')
  return toUser(row, (await repo.findRolesByUserIds(deps.db, [id])).get(id) ?? [])
}

async function assertSitesExist(deps: AppDeps, roles: RoleList) {
  const ids = [...new Set(roles.map((r) => r.siteId))]
  if (!ids.length) return
  const found = await findSiteIds(deps.db, ids)
  if (found.length !== ids.length) throw validationFailed({ roles: ['A role refers to a site that does not exist'] })
}

/**
 * Admins act on accounts only at sites where they hold the admin role
 * (role assignments are per site, docs/architecture.md).
 */
function assertAdministers(ability: AppAbility, siteIds: number[]) {
  for (const id of new Set(siteIds)) {
    if (!allows(ability, 'update', 'Site', { id }))
      throw new AppError(403, ErrorCode.FORBIDDEN, 'You can manage accounts and roles only at sites you administer')
  }
}

export async function createUser(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  input: CreateUserInput,
): Promise<User> {
  authorize(ability, 'create', 'User')
  await assertSitesExist(deps, input.roles)
  assertAdministers(
    ability,
    input.roles.map((r) => r.siteId),
  )
  if (await repo.findUserByEmail(deps.db, input.email))
    throw conflict('An account with this e-mail address exists already', { fields: { email: ['Already in use'] } })
  assertStrongPassword('password', input.password, [input.email, input.displayName])
  const hash = await hashPassword(input.password)
  const now = deps.clock.now()
  const id = await deps.db.transaction().execute(async (trx) => {
    const id = await repo.insertUser(trx, {
      email: input.email,
      display_name: input.displayName,
      password_hash: hash,
      created_at: now,
      updated_at: now,
    })
    await repo.replaceRoles(trx, id, input.roles)
    await appendAudit(trx, deps.clock, ctx, {
      action: 'user.create',
      entityType: 'User',
      entityId: id,
      after: { email: input.email, displayName: input.displayName, roles: input.roles },
    })
    return id
  })
  return getUser(deps, ability, id)
}

export async function updateUser(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  input: UpdateUserInput,
): Promise<User> {
  authorize(ability, 'update', 'User', { id })
  const current = (await repo.findRolesByUserIds(deps.db, [id])).get(id) ?? []
  // name, active flag and password belong to the whole account: every site where it holds a role must be the admin's
  if (input.displayName !== undefined || input.active !== undefined || input.password !== undefined)
    assertAdministers(
      ability,
      current.map((r) => r.siteId),
    )
  if (input.roles) {
    authorize(ability, 'assign_roles', 'User', { id })
    await assertSitesExist(deps, input.roles)
    // only the assignments that change count: added ones and removed ones
    const key = (r: { siteId: number; role: string }) => `${r.siteId}:${r.role}`
    const was = new Set(current.map(key))
    const will = new Set(input.roles.map(key))
    const changed = [...current.filter((r) => !will.has(key(r))), ...input.roles.filter((r) => !was.has(key(r)))]
    // a role list that changes nothing is still an act on the account's roles: every site the account holds a role
    // at must be the admin's, so another site's admin can neither change nor re-affirm them (docs/security.md,
    // "Authorization")
    assertAdministers(
      ability,
      (changed.length ? changed : [...current, ...input.roles]).map((r) => r.siteId),
    )
  }
  if (input.active === false && ctx.actorId === id)
    throw new AppError(403, ErrorCode.FORBIDDEN, 'You cannot deactivate your own account')
  if (input.password) {
    const target = await repo.findUserById(deps.db, id)
    assertStrongPassword('password', input.password, target ? [target.email, target.display_name] : [])
  }
  const hash = input.password ? await hashPassword(input.password) : undefined
  await deps.db.transaction().execute(async (trx) => {
    const before = await repo.findUserForUpdate(trx, id)
    if (!before) throw notFound('User')
    const beforeRoles = (await repo.findRolesByUserIds(trx, [id])).get(id) ?? []
    await repo.updateUserRow(trx, id, {
      ...(input.displayName !== undefined ? { display_name: input.displayName } : {}),
      ...(input.active !== undefined ? { active: input.active } : {}),
      ...(hash ? { password_hash: hash } : {}),
      updated_at: deps.clock.now(),
    })
    if (input.roles) await repo.replaceRoles(trx, id, input.roles)
    // a reset password or a deactivated account ends every session the account has (OWASP ASVS 4.0.3 §3.3.3)
    if (hash || input.active === false) await deleteSessionsOfUser(trx, id)
    await appendAudit(trx, deps.clock, ctx, {
      action: hash ? 'user.password_reset' : 'user.update',
      entityType: 'User',
      entityId: id,
      before: { displayName: before.display_name, active: before.active, roles: beforeRoles },
      after: {
        displayName: input.displayName ?? before.display_name,
        active: input.active ?? before.active,
        roles: input.roles ?? beforeRoles,
      },
    })
  })
  return getUser(deps, ability, id)
}

/**
 * Anyone changes their own password; the current one is required. A guess of the current password counts and is
 * audited like a failed sign-in (throttled the same way), and a change ends every other session of the account.
 */
export async function changeOwnPassword(
  deps: AppDeps,
  ctx: AuditContext,
  userId: number,
  current: string,
  next: string,
  keepSessionId?: string,
) {
  const user = await repo.findUserById(deps.db, userId)
  if (!user) throw notFound('User')
  const ip = ctx.ip ?? 'unknown'
  const reservation = await reserveAttempt(deps, user.email, ip)
  const ok = await verifyPassword(user.password_hash, current)
  await reservation.release(ok)
  if (!ok) {
    await deps.db.transaction().execute(async (trx) => {
      await recordAttempt(trx, {
        at: deps.clock.now(),
        email: user.email,
        ip,
        success: false,
        purpose: 'password_change',
      })
      await appendAudit(trx, deps.clock, ctx, {
        action: 'user.password_change_failed',
        entityType: 'User',
        entityId: userId,
        after: { why: 'wrong current password' },
      })
    })
    throw validationFailed({ currentPassword: ['The current password is wrong'] })
  }
  assertStrongPassword('newPassword', next, [user.email, user.display_name])
  const hash = await hashPassword(next)
  await deps.db.transaction().execute(async (trx) => {
    await repo.updateUserRow(trx, userId, { password_hash: hash, updated_at: deps.clock.now() })
    const ended = await deleteSessionsOfUser(trx, userId, keepSessionId)
    await appendAudit(trx, deps.clock, ctx, {
      action: 'user.password_change',
      entityType: 'User',
      entityId: userId,
      after: { otherSessionsEnded: ended },
    })
  })
}

import type { Db } from '../../db/index.ts'
import type { Database } from '../../db/schema.ts'
import { type Kysely, sql, type Transaction } from 'kysely'
import type { RoleAssignment, Role } from '../../../shared/schemas/users.ts'
import { NOTICE_RECIPIENTS, type Notice } from '../../../shared/abilities/notices.ts'

type Q = Kysely<Database> | Transaction<Database>

export function findUserByEmail(db: Q, email: string) {
  return db
    .selectFrom('app_user')
    .selectAll()
    .where((eb) => eb(eb.fn('lower', ['email']), '=', email.toLowerCase()))
    .executeTakeFirst()
}

export function findUserById(db: Q, id: number) {
  return db.selectFrom('app_user').selectAll().where('id', '=', id).executeTakeFirst()
}

/** The account and its role assignments (ordered by site and role) in one query; undefined when there is none. */
export async function findUserWithRoles(db: Q, id: number) {
  const row = await db
    .selectFrom('app_user')
    .select(['id', 'email', 'display_name', 'active'])
    .select((eb) =>
      eb.fn
        .coalesce(
          eb
            .selectFrom('role_assignment')
            .select(
              sql<
                RoleAssignment[]
              >`json_agg(json_build_object('siteId', site_id, 'role', role) ORDER BY site_id, role)`.as('r'),
            )
            .whereRef('role_assignment.user_id', '=', 'app_user.id'),
          sql<RoleAssignment[]>`'[]'::json`,
        )
        .as('roles'),
    )
    .where('id', '=', id)
    .executeTakeFirst()
  return row
}

export async function findRolesByUserIds(db: Q, ids: number[]): Promise<Map<number, RoleAssignment[]>> {
  const map = new Map<number, RoleAssignment[]>()
  if (!ids.length) return map
  const rows = await db
    .selectFrom('role_assignment')
    .select(['user_id', 'site_id', 'role'])
    .where('user_id', 'in', ids)
    .orderBy('site_id')
    .orderBy('role')
    .execute()
  for (const r of rows) {
    const list = map.get(r.user_id) ?? []
    list.push({ siteId: r.site_id, role: r.role })
    map.set(r.user_id, list)
  }
  return map
}

export async function replaceRoles(trx: Transaction<Database>, userId: number, roles: RoleAssignment[]) {
  await trx.deleteFrom('role_assignment').where('user_id', '=', userId).execute()
  if (roles.length) {
    await trx
      .insertInto('role_assignment')
      .values(roles.map((r) => ({ user_id: userId, site_id: r.siteId, role: r.role })))
      .execute()
  }
}

export function listUsers(db: Db, opts: { q?: string; limit: number; offset: number }) {
  let query = db.selectFrom('app_user').selectAll()
  if (opts.q)
    query = query.where((eb) =>
      eb.or([eb('email', 'ilike', `%${opts.q}%`), eb('display_name', 'ilike', `%${opts.q}%`)]),
    )
  return query.orderBy('display_name').limit(opts.limit).offset(opts.offset).execute()
}

export async function countUsers(db: Db, q?: string): Promise<number> {
  let query = db.selectFrom('app_user').select((eb) => eb.fn.countAll<number>().as('n'))
  if (q) query = query.where((eb) => eb.or([eb('email', 'ilike', `%${q}%`), eb('display_name', 'ilike', `%${q}%`)]))
  return (await query.executeTakeFirstOrThrow()).n
}

/** Users holding one of the roles at a site (mail recipients). */
export function findUsersWithRole(db: Q, siteId: number, roles: readonly Role[]) {
  return db
    .selectFrom('app_user')
    .innerJoin('role_assignment', 'role_assignment.user_id', 'app_user.id')
    .select(['app_user.id', 'app_user.email', 'app_user.display_name'])
    .distinct()
    .where('role_assignment.site_id', '=', siteId)
    .where('role_assignment.role', 'in', [...roles])
    .where('app_user.active', '=', true)
    .execute()
}

/** Where to write to a user, and their name. */
export function userContact(db: Q, userId: number) {
  return db.selectFrom('app_user').select(['email', 'display_name']).where('id', '=', userId).executeTakeFirstOrThrow()
}

/** The active users of the site who receive a notice (shared/abilities/notices.ts). */
export function recipientsOf(db: Q, siteId: number, notice: Notice) {
  return findUsersWithRole(db, siteId, NOTICE_RECIPIENTS[notice])
}

export async function insertUser(
  db: Q,
  v: { email: string; display_name: string; password_hash: string; created_at: Date; updated_at: Date },
): Promise<number> {
  return (await db.insertInto('app_user').values(v).returning('id').executeTakeFirstOrThrow()).id
}

export function findUserForUpdate(trx: Transaction<Database>, id: number) {
  return trx.selectFrom('app_user').selectAll().where('id', '=', id).forUpdate().executeTakeFirst()
}

export function updateUserRow(
  db: Q,
  id: number,
  set: { display_name?: string; active?: boolean; password_hash?: string; updated_at: Date },
) {
  return db.updateTable('app_user').set(set).where('id', '=', id).execute()
}

/** The admin role at each of these sites. */
export function insertAdminRoles(db: Q, userId: number, siteIds: number[]) {
  return db
    .insertInto('role_assignment')
    .values(siteIds.map((siteId) => ({ user_id: userId, site_id: siteId, role: 'admin' as const })))
    .execute()
}

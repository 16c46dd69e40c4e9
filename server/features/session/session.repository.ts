import { type Kysely, sql, type Transaction } from 'kysely'
import type { Db } from '../../db/index.ts'
import type { Database, SignInPurpose } from '../../db/schema.ts'

type Q = Kysely<Database> | Transaction<Database>

export interface ThrottleRow {
  key: string
  failures: number
  lastFailureAt: Date | null
  blockedUntil: Date | null
}

/**
 * Locks the throttle rows of the keys (created when missing) in key order, so concurrent attempts on the same key
 * queue on the row lock: counting an attempt and checking the limit is one atomic step.
 */
export async function lockThrottleRows(trx: Transaction<Database>, keys: string[]): Promise<ThrottleRow[]> {
  const sorted = [...new Set(keys)].sort()
  await trx
    .insertInto('sign_in_throttle')
    .values(sorted.map((key) => ({ key })))
    .onConflict((oc) => oc.column('key').doNothing())
    .execute()
  const rows = await trx
    .selectFrom('sign_in_throttle')
    .selectAll()
    .where('key', 'in', sorted)
    .orderBy('key')
    .forUpdate()
    .execute()
  return rows.map((r) => ({
    key: r.key,
    failures: r.failures,
    lastFailureAt: r.last_failure_at,
    blockedUntil: r.blocked_until,
  }))
}

export async function saveThrottleRow(trx: Transaction<Database>, row: ThrottleRow): Promise<void> {
  await trx
    .updateTable('sign_in_throttle')
    .set({ failures: row.failures, last_failure_at: row.lastFailureAt, blocked_until: row.blockedUntil })
    .where('key', '=', row.key)
    .execute()
}

/** True when the account has signed in successfully from this address since `since`. */
export async function isKnownAddress(db: Q, email: string, ip: string, since: Date): Promise<boolean> {
  const row = await db
    .selectFrom('sign_in_attempt')
    .select('id')
    .where((eb) => eb(eb.fn('lower', ['email']), '=', email.toLowerCase()))
    .where('ip', '=', ip)
    .where('success', '=', true)
    .where('at', '>', since)
    .limit(1)
    .executeTakeFirst()
  return Boolean(row)
}

export async function recordAttempt(
  db: Q,
  a: { at: Date; email: string; ip: string; success: boolean; purpose: SignInPurpose },
): Promise<void> {
  await db.insertInto('sign_in_attempt').values(a).execute()
}

/** Ends every session of the user except `keepSid` (password change, reset, deactivation). Answers how many. */
export async function deleteSessionsOfUser(db: Db | Transaction<Database>, userId: number, keepSid?: string) {
  // sess is the express-session JSON (server/types/express.d.ts: userId)
  let q = db.deleteFrom('session').where(sql<string>`sess->>'userId'`, '=', String(userId))
  if (keepSid) q = q.where('sid', '<>', keepSid)
  const r = await q.executeTakeFirst()
  return Number(r.numDeletedRows)
}

// Every query of the history import (docs/trip-tests.md#history-import). Functions take `db` or a transaction first.
import type { Insertable, Kysely, Transaction } from 'kysely'
import type { BypassTable, Database, TripTestTable } from '../../db/schema.ts'
import { batchesOf } from '../../db/batches.ts'
import { closeImportBatch, insertImportBatch, lockImportBatch } from '../register/imports.repository.ts'

type Db = Kysely<Database> | Transaction<Database>

/** The site of an import, with its time zone and policy. */
export function findSite(db: Db, siteId: number) {
  return db.selectFrom('site').select(['id', 'code', 'time_zone', 'policy']).where('id', '=', siteId).executeTakeFirst()
}

/**
 * The limits of a site named by the tags of a file (case does not matter), with what an imported test copies from the
 * limit and its primary instrument. In a commit the rows are locked, so two imports of the same limits queue.
 */
export function limitsByTags(db: Db, siteId: number, lowerTags: string[], lock: boolean) {
  if (!lowerTags.length) return Promise.resolve([])
  let q = db
    .selectFrom('limit_function')
    .innerJoin('instrument', 'instrument.id', 'limit_function.primary_instrument_id')
    .select([
      'limit_function.id',
      'limit_function.tag',
      'limit_function.status',
      'limit_function.revision',
      'limit_function.setpoint',
      'limit_function.commissioned_at',
      'instrument.range_low',
      'instrument.range_high',
      'instrument.signal',
    ])
    .where('limit_function.site_id', '=', siteId)
    .where((eb) => eb.fn('lower', ['limit_function.tag']), 'in', lowerTags)
  if (lock) q = q.forUpdate('limit_function')
  return q.execute()
}

/** The times of the tests already on record for these limits (recorded here or imported). */
export function testTimesOf(db: Db, limitIds: number[]) {
  if (!limitIds.length) return Promise.resolve([])
  return db
    .selectFrom('trip_test')
    .select(['limit_id', 'performed_at', 'source'])
    .where('limit_id', 'in', limitIds)
    .execute()
}

/** The spans the bypasses of these limits were (or are) in force: from activation to removal, or still open. */
export function bypassSpansOf(db: Db, limitIds: number[]) {
  if (!limitIds.length) return Promise.resolve([])
  return db
    .selectFrom('bypass')
    .select(['limit_id', 'activated_at', 'removed_at', 'source'])
    .where('limit_id', 'in', limitIds)
    .where('activated_at', 'is not', null)
    .execute()
}

export function insertHistoryBatch(db: Db, v: Parameters<typeof insertImportBatch>[2]) {
  return insertImportBatch(db, 'history', v)
}

/** A history batch, locked for its commit. */
export function lockHistoryBatch(trx: Transaction<Database>, id: number) {
  return lockImportBatch(trx, 'history', id)
}

export const closeBatch = closeImportBatch

/** Inserts imported tests, 500 rows a statement (below PostgreSQL's limit of bind parameters). */
export async function insertImportedTests(db: Db, rows: Insertable<TripTestTable>[]) {
  for (const batch of batchesOf(rows, 500)) await db.insertInto('trip_test').values(batch).execute()
}

/** Inserts imported bypasses, 500 rows a statement. */
export async function insertImportedBypasses(db: Db, rows: Insertable<BypassTable>[]) {
  for (const batch of batchesOf(rows, 500)) await db.insertInto('bypass').values(batch).execute()
}

export function setCommissioningDate(db: Db, limitId: number, day: string, now: Date) {
  return db
    .updateTable('limit_function')
    .set({ commissioned_at: day, updated_at: now })
    .where('id', '=', limitId)
    .execute()
}

export async function displayNameOf(db: Db, userId: number) {
  const r = await db.selectFrom('app_user').select('display_name').where('id', '=', userId).executeTakeFirst()
  return r?.display_name ?? ''
}

import { type Kysely, sql, type Transaction } from 'kysely'
import type { StoredRow } from './import-file.ts'
import type { Database } from '../../db/schema.ts'

// Every query of the register import (docs/register.md): its batches, the user's remembered mapping, and what a run
// reads of the register besides what the instruments, limits and processes repositories answer.

type Q = Kysely<Database> | Transaction<Database>
type Trx = Transaction<Database>

/** The site an import is for (id and code). */
export function findImportSite(db: Q, siteId: number) {
  return db.selectFrom('site').select(['id', 'code']).where('id', '=', siteId).executeTakeFirst()
}

/** The site's areas, in the order they were made. */
export function listSiteAreas(db: Q, siteId: number) {
  return db.selectFrom('area').select(['id', 'name']).where('site_id', '=', siteId).orderBy('id').execute()
}

/** The site's processes, in the order they were made. */
export function listSiteProcesses(db: Q, siteId: number) {
  return db.selectFrom('process').selectAll().where('site_id', '=', siteId).orderBy('id').execute()
}

/** The site's instruments with these lower-case tags, with their process's name, locked for update. */
export function lockInstrumentsByTags(trx: Trx, siteId: number, lowerTags: string[]) {
  return trx
    .selectFrom('instrument')
    .innerJoin('process', 'process.id', 'instrument.process_id')
    .selectAll('instrument')
    .select('process.name as process_name')
    .where('instrument.site_id', '=', siteId)
    .where(sql<string>`lower(instrument.tag)`, 'in', lowerTags)
    .forUpdate(['instrument'])
    .execute()
}

/** The operating-window warnings stored with a limit. */
export async function findLimitWindowWarnings(db: Q, limitId: number) {
  const row = await db
    .selectFrom('limit_function')
    .select('window_warnings')
    .where('id', '=', limitId)
    .executeTakeFirstOrThrow()
  return row.window_warnings
}

/**
 * Runs `fn` inside the savepoint `import_row`: released when `fn` resolves; rolled back to and released when it
 * throws, and the error thrown on, so the row's writes are undone and the transaction goes on.
 */
export async function inImportRowSavepoint(trx: Trx, fn: () => Promise<void>): Promise<void> {
  await sql`SAVEPOINT import_row`.execute(trx)
  try {
    await fn()
  } catch (err) {
    await sql`ROLLBACK TO SAVEPOINT import_row`.execute(trx)
    await sql`RELEASE SAVEPOINT import_row`.execute(trx)
    throw err
  }
  await sql`RELEASE SAVEPOINT import_row`.execute(trx)
}

/** The mapping a user saved (file header → column key), as stored. */
export function findImportMapping(db: Q, userId: number) {
  return db.selectFrom('import_mapping').select('mapping').where('user_id', '=', userId).executeTakeFirst()
}

/** Saves the user's mapping, replacing the one stored. */
export function saveImportMapping(db: Q, userId: number, mapping: Record<string, string>, now: Date) {
  return db
    .insertInto('import_mapping')
    .values({ user_id: userId, mapping: JSON.stringify(mapping), updated_at: now })
    .onConflict((oc) =>
      oc.column('user_id').doUpdateSet({ mapping: (eb) => eb.ref('excluded.mapping'), updated_at: now }),
    )
    .execute()
}

/** Stores a checked batch of an import (the register's or the history's); answers its id. */
export function insertImportBatch(
  db: Q,
  kind: 'register' | 'history',
  v: { siteId: number; userId: number; fileName: string; checksum: string; rows: StoredRow[]; now: Date },
) {
  return db
    .insertInto('import_batch')
    .values({
      site_id: v.siteId,
      created_by: v.userId,
      file_name: v.fileName,
      checksum: v.checksum,
      row_count: v.rows.length,
      rows: JSON.stringify(v.rows),
      created_at: v.now,
      kind,
    })
    .returning('id')
    .executeTakeFirstOrThrow()
}

/** A batch of an import, locked for its commit. */
export function lockImportBatch(trx: Trx, kind: 'register' | 'history', id: number) {
  return trx
    .selectFrom('import_batch')
    .selectAll()
    .where('id', '=', id)
    .where('kind', '=', kind)
    .forUpdate()
    .executeTakeFirst()
}

export function closeImportBatch(db: Q, id: number, status: 'committed' | 'unchanged', now: Date) {
  return db.updateTable('import_batch').set({ status, committed_at: now }).where('id', '=', id).execute()
}

/** Of these limits, the ids of the proposed ones that no open change request (draft, submitted, approved) holds. */
export async function proposedLimitIdsWithoutOpenChange(db: Q, limitIds: number[]): Promise<number[]> {
  if (!limitIds.length) return []
  const rows = await db
    .selectFrom('limit_function')
    .select('id')
    .where('id', 'in', limitIds)
    .where('status', '=', 'proposed')
    .where((eb) =>
      eb.not(
        eb.exists(
          eb
            .selectFrom('change_request_item')
            .innerJoin('change_request', 'change_request.id', 'change_request_item.change_request_id')
            .select('change_request_item.id')
            .whereRef('change_request_item.limit_id', '=', 'limit_function.id')
            .where('change_request.status', 'in', ['draft', 'submitted', 'approved']),
        ),
      ),
    )
    .orderBy('id')
    .execute()
  return rows.map((r) => r.id)
}

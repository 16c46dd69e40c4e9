import type { Insertable, Kysely, Transaction, Updateable } from 'kysely'
import type { Database, InstrumentRevisionTable, InstrumentTable } from '../../db/schema.ts'
import { pageWithTotal } from '../../db/paging.ts'
import { findIdByTag } from './tags.repository.ts'
import { idsOrNone } from '../../db/ids.ts'

// Every query of the register's instruments (docs/register.md).

type Q = Kysely<Database> | Transaction<Database>

/** The instrument with its process's name; the instrument row locked for update when `lock` is set. */
export function findInstrumentRow(db: Q, id: number, lock = false) {
  let q = db
    .selectFrom('instrument')
    .innerJoin('process', 'process.id', 'instrument.process_id')
    .selectAll('instrument')
    .select('process.name as process_name')
    .where('instrument.id', '=', id)
  if (lock) q = q.forUpdate(['instrument'])
  return q.executeTakeFirst()
}

/** An instrument of the site with this tag (case-insensitive), other than `exceptId`. */
export function findInstrumentIdByTag(db: Q, siteId: number, tag: string, exceptId: number | null) {
  return findIdByTag(db, 'instrument', siteId, tag, exceptId)
}

/** One page of instruments (with their process's name) by tag, and the number matching. */
export function listInstrumentRows(
  db: Q,
  f: { siteIds: number[]; processIds?: number[]; q?: string; page: number; pageSize: number },
) {
  let q = db
    .selectFrom('instrument')
    .innerJoin('process', 'process.id', 'instrument.process_id')
    .where('instrument.site_id', 'in', idsOrNone(f.siteIds))
  if (f.processIds?.length) q = q.where('instrument.process_id', 'in', f.processIds)
  if (f.q) q = q.where('instrument.tag', 'ilike', `%${f.q}%`)
  return pageWithTotal(q, f, (filtered) =>
    filtered.selectAll('instrument').select('process.name as process_name').orderBy('instrument.tag'),
  )
}

export async function insertInstrumentRow(db: Q, values: Insertable<InstrumentTable>): Promise<number> {
  return (await db.insertInto('instrument').values(values).returning('id').executeTakeFirstOrThrow()).id
}

export function updateInstrumentRow(db: Q, id: number, set: Updateable<InstrumentTable>) {
  return db.updateTable('instrument').set(set).where('id', '=', id).execute()
}

export function insertInstrumentRevision(db: Q, values: Insertable<InstrumentRevisionTable>) {
  return db.insertInto('instrument_revision').values(values).execute()
}

/** Tags of the active limits standing on the instrument. */
export function activeLimitTagsOnInstrument(db: Q, instrumentId: number) {
  return db
    .selectFrom('limit_instrument')
    .innerJoin('limit_function', 'limit_function.id', 'limit_instrument.limit_id')
    .select('limit_function.tag')
    .where('limit_instrument.instrument_id', '=', instrumentId)
    .where('limit_function.status', '=', 'active')
    .execute()
}

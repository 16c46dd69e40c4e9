import type { Insertable, Kysely, Transaction } from 'kysely'
import type { Database, ProcessTable } from '../../db/schema.ts'
import { idsOrNone } from '../../db/ids.ts'

// Every query of the register's processes (docs/register.md).

type Q = Kysely<Database> | Transaction<Database>

/** Processes of these sites (and areas, when given), by name. */
export function listProcessRows(db: Q, siteIds: number[], areaIds?: number[]) {
  let q = db.selectFrom('process').selectAll().where('site_id', 'in', idsOrNone(siteIds))
  if (areaIds?.length) q = q.where('area_id', 'in', areaIds)
  return q.orderBy('name').execute()
}

/** The process; locked for update when `lock` is set. */
export function findProcessRow(db: Q, id: number, lock = false) {
  const q = db.selectFrom('process').selectAll().where('id', '=', id)
  return (lock ? q.forUpdate() : q).executeTakeFirst()
}

export function findAreaRow(db: Q, id: number) {
  return db.selectFrom('area').selectAll().where('id', '=', id).executeTakeFirst()
}

export function findProcessIdByName(db: Q, areaId: number, name: string) {
  return db.selectFrom('process').select('id').where('area_id', '=', areaId).where('name', '=', name).executeTakeFirst()
}

export function insertProcess(db: Q, values: Insertable<ProcessTable>) {
  return db.insertInto('process').values(values).returningAll().executeTakeFirstOrThrow()
}

export function updateProcessRow(db: Q, id: number, set: { name?: string; description?: string; updated_at: Date }) {
  return db.updateTable('process').set(set).where('id', '=', id).returningAll().executeTakeFirstOrThrow()
}

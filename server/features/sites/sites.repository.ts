import type { Kysely, Transaction } from 'kysely'
import type { Database } from '../../db/schema.ts'

// Every query of sites and areas (docs/conventions.md#site-policies).

type Q = Kysely<Database> | Transaction<Database>

export function findSitePolicyRow(db: Q, siteId: number) {
  return db.selectFrom('site').select('policy').where('id', '=', siteId).executeTakeFirst()
}

export function listSiteRows(db: Q) {
  return db.selectFrom('site').selectAll().orderBy('code').execute()
}

/** The site; locked for update when `lock` is set. */
export function findSiteRow(db: Q, id: number, lock = false) {
  const q = db.selectFrom('site').selectAll().where('id', '=', id)
  return (lock ? q.forUpdate() : q).executeTakeFirst()
}

export function findSiteIdByCode(db: Q, code: string) {
  return db.selectFrom('site').select('id').where('code', '=', code).executeTakeFirst()
}

export function insertSite(
  db: Q,
  v: { code: string; name: string; time_zone: string; policy: string; created_at: Date },
) {
  return db.insertInto('site').values(v).returningAll().executeTakeFirstOrThrow()
}

export function updateSiteRow(db: Q, id: number, set: { name?: string; time_zone?: string; policy: string }) {
  return db.updateTable('site').set(set).where('id', '=', id).returningAll().executeTakeFirstOrThrow()
}

/** Those of these site ids that exist. */
export function findSiteIds(db: Q, ids: number[]) {
  return db.selectFrom('site').select('id').where('id', 'in', ids).execute()
}

export function listSiteCodes(db: Q) {
  return db.selectFrom('site').select(['id', 'code']).execute()
}

/** The site a fresh installation's first administrator gets when there is none. */
export function insertMainSite(db: Q, now: Date) {
  return db
    .insertInto('site')
    .values({ code: 'MAIN', name: 'Main site', time_zone: 'UTC', created_at: now })
    .returning(['id', 'code'])
    .executeTakeFirstOrThrow()
}

/** Areas by site and name, of these sites only when given. */
export function listAreaRows(db: Q, siteIds?: number[]) {
  let q = db.selectFrom('area').selectAll().orderBy('site_id').orderBy('name')
  if (siteIds?.length) q = q.where('site_id', 'in', siteIds)
  return q.execute()
}

export function findAreaIdByName(db: Q, siteId: number, name: string) {
  return db.selectFrom('area').select('id').where('site_id', '=', siteId).where('name', '=', name).executeTakeFirst()
}

export function findAreaRowForUpdate(db: Q, id: number) {
  return db.selectFrom('area').selectAll().where('id', '=', id).forUpdate().executeTakeFirst()
}

export function insertArea(db: Q, siteId: number, name: string) {
  return db.insertInto('area').values({ site_id: siteId, name }).returningAll().executeTakeFirstOrThrow()
}

export function updateAreaName(db: Q, id: number, name: string) {
  return db.updateTable('area').set({ name }).where('id', '=', id).returningAll().executeTakeFirstOrThrow()
}

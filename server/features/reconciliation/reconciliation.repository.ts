// Every query of the reconciliation feature (sources, runs, findings, limits' last reconciliation).
import { type Insertable, type Kysely, sql, type Transaction, type Updateable } from 'kysely'
import type { PendingChange, RegisterLimit } from '../../../shared/domain/reconcile.ts'
import { normalizeDecimal } from '../../../shared/domain/modbus-decode.ts'
import type { FindingKind, FindingState, ReconAttribute } from '../../../shared/schemas/reconciliation.ts'
import type { Database, FindingTable, ReconciliationRunTable, ReconciliationSourceTable } from '../../db/schema.ts'
import { pageWithTotal } from '../../db/paging.ts'
import { batchesOf } from '../../db/batches.ts'

type Q = Kysely<Database> | Transaction<Database>
type Trx = Transaction<Database>

// ---- sources ----

export function findSource(db: Q, id: number) {
  return db.selectFrom('reconciliation_source').selectAll().where('id', '=', id).executeTakeFirst()
}
export type SourceRow = NonNullable<Awaited<ReturnType<typeof findSource>>>

export function lockSource(trx: Trx, id: number) {
  return trx.selectFrom('reconciliation_source').selectAll().where('id', '=', id).forUpdate().executeTakeFirst()
}

export async function listSources(db: Q, siteIds: number[], page: { limit: number; offset: number }) {
  if (!siteIds.length) return { rows: [], total: 0 }
  return pageWithTotal(db.selectFrom('reconciliation_source').where('site_id', 'in', siteIds), page, (q) =>
    q.selectAll().orderBy('site_id').orderBy('name'),
  )
}

export function insertSource(trx: Trx, values: Insertable<ReconciliationSourceTable>) {
  return trx.insertInto('reconciliation_source').values(values).returning('id').executeTakeFirstOrThrow()
}

export function updateSource(trx: Trx, id: number, set: Updateable<ReconciliationSourceTable>) {
  return trx.updateTable('reconciliation_source').set(set).where('id', '=', id).execute()
}

/** Live devices whose next scheduled run is due. */
export function findDueSources(db: Q, now: Date) {
  return db
    .selectFrom('reconciliation_source')
    .innerJoin('site', 'site.id', 'reconciliation_source.site_id')
    .select([
      'reconciliation_source.id',
      'reconciliation_source.schedule_hours',
      'reconciliation_source.next_run_at',
      'site.policy',
    ])
    .where('reconciliation_source.kind', '=', 'modbus')
    .where('reconciliation_source.active', '=', true)
    .where('reconciliation_source.next_run_at', '<=', now)
    .execute()
}

/** Claims a due source for one run: moves its next run on, only if nobody else did (a lease per source). */
export async function claimSource(db: Q, id: number, dueAt: Date, next: Date): Promise<boolean> {
  const r = await db
    .updateTable('reconciliation_source')
    .set({ next_run_at: next })
    .where('id', '=', id)
    .where('next_run_at', '=', dueAt)
    .executeTakeFirst()
  return Number(r.numUpdatedRows) === 1
}

export async function openFindingCounts(db: Q, sourceIds: number[]) {
  if (!sourceIds.length) return new Map<number, number>()
  const rows = await db
    .selectFrom('finding')
    .select(['source_id', (eb) => eb.fn.countAll<string>().as('n')])
    .where('source_id', 'in', sourceIds)
    .where('state', 'in', ['open', 'acknowledged'])
    .groupBy('source_id')
    .execute()
  return new Map(rows.map((r) => [r.source_id, Number(r.n)]))
}

// ---- the register's side ----

/** The site's limits (every status) with their active values and whether an active bypass is on record. */
export async function loadRegisterLimits(db: Q, siteId: number): Promise<RegisterLimit[]> {
  const rows = await db
    .selectFrom('limit_function as l')
    .innerJoin('instrument as i', 'i.id', 'l.primary_instrument_id')
    .select([
      'l.id',
      'l.tag',
      'l.status',
      'l.area_id',
      'i.unit',
      'l.setpoint',
      'l.deadband',
      'l.deadband_unit',
      'i.range_low',
      'i.range_high',
      'l.on_delay_sec',
      'l.off_delay_sec',
      'l.priority',
      'l.latching',
      (eb) =>
        eb
          .exists(
            eb
              .selectFrom('bypass')
              .select('bypass.id')
              .whereRef('bypass.limit_id', '=', 'l.id')
              .where('bypass.status', '=', 'active'),
          )
          .as('bypass_active'),
    ])
    .where('l.site_id', '=', siteId)
    .execute()
  return rows.map((r) => ({
    limitId: r.id,
    tag: r.tag,
    status: r.status,
    areaId: r.area_id,
    unit: r.unit,
    setpoint: r.setpoint,
    deadband: r.deadband,
    deadbandUnit: r.deadband_unit,
    rangeLow: r.range_low,
    rangeHigh: r.range_high,
    onDelaySec: r.on_delay_sec,
    offDelaySec: r.off_delay_sec,
    priority: r.priority,
    latching: r.latching,
    bypassActive: Boolean(r.bypass_active),
  }))
}

const CHANGE_FIELDS: Record<string, ReconAttribute> = {
  setpoint: 'setpoint',
  deadband: 'deadband',
  onDelaySec: 'onDelaySec',
  offDelaySec: 'offDelaySec',
  latching: 'latching',
}

/**
 * Values that approved change requests of the site, not yet implemented, put on devices. An implemented request's
 * values are the register's own; a superseded one must not explain a device that went back to an old value.
 */
export async function loadPendingChanges(db: Q, siteId: number): Promise<PendingChange[]> {
  const rows = await db
    .selectFrom('change_request_item as i')
    .innerJoin('change_request as c', 'c.id', 'i.change_request_id')
    .select(['i.limit_id', 'i.changes', 'c.id'])
    .where('c.site_id', '=', siteId)
    .where('c.status', '=', 'approved')
    .where('i.limit_id', 'is not', null)
    .execute()
  const out: PendingChange[] = []
  for (const r of rows) {
    for (const [field, change] of Object.entries(r.changes ?? {})) {
      const attribute = CHANGE_FIELDS[field]
      if (!attribute || change === null || typeof change !== 'object') continue
      const to = (change as { to: unknown }).to
      if (to === null || to === undefined) continue
      out.push({
        limitId: r.limit_id!,
        attribute,
        to: typeof to === 'boolean' ? String(to) : normalizeDecimal(String(to)),
        changeRequestId: r.id,
      })
    }
  }
  return out
}

// ---- runs ----

export function insertRun(trx: Trx, values: Insertable<ReconciliationRunTable>) {
  return trx.insertInto('reconciliation_run').values(values).returning('id').executeTakeFirstOrThrow()
}
export function updateRun(trx: Trx, id: number, set: Updateable<ReconciliationRunTable>) {
  return trx.updateTable('reconciliation_run').set(set).where('id', '=', id).execute()
}

function runTables(db: Q) {
  return db
    .selectFrom('reconciliation_run as r')
    .innerJoin('reconciliation_source as s', 's.id', 'r.source_id')
    .leftJoin('app_user as u', 'u.id', 'r.run_by')
}

function runColumns(q: ReturnType<typeof runTables>) {
  return q.selectAll('r').select(['s.name as source_name', 'u.display_name as run_by_name'])
}

function runQuery(db: Q) {
  return runColumns(runTables(db))
}
export type RunRow = Awaited<ReturnType<ReturnType<typeof runQuery>['executeTakeFirstOrThrow']>>

export function findRun(db: Q, id: number) {
  return runQuery(db).where('r.id', '=', id).executeTakeFirst()
}

export async function listRuns(
  db: Q,
  f: { siteIds: number[]; sourceIds?: number[] },
  page: { limit: number; offset: number },
) {
  if (!f.siteIds.length) return { rows: [], total: 0 }
  let q = runTables(db).where('r.site_id', 'in', f.siteIds)
  if (f.sourceIds?.length) q = q.where('r.source_id', 'in', f.sourceIds)
  return pageWithTotal(q, page, (filtered) =>
    runColumns(filtered).orderBy('r.started_at', 'desc').orderBy('r.id', 'desc'),
  )
}

export async function lastRuns(db: Q, sourceIds: number[]) {
  if (!sourceIds.length) return new Map<number, RunRow>()
  const rows = await runQuery(db)
    .where('r.id', 'in', (eb) =>
      eb
        .selectFrom('reconciliation_run')
        .select((e) => e.fn.max('id').as('id'))
        .where('source_id', 'in', sourceIds)
        .groupBy('source_id'),
    )
    .execute()
  return new Map(rows.map((r) => [r.source_id, r]))
}

// ---- findings ----

export function findingsOfSource(trx: Trx, sourceId: number) {
  return trx.selectFrom('finding').selectAll().where('source_id', '=', sourceId).forUpdate().execute()
}
export type FindingRow = Awaited<ReturnType<typeof findingsOfSource>>[number]

export async function insertFindings(trx: Trx, rows: Insertable<FindingTable>[]) {
  for (const batch of batchesOf(rows, 1000)) await trx.insertInto('finding').values(batch).execute()
}

export function updateFinding(trx: Trx, id: number, set: Updateable<FindingTable>) {
  return trx
    .updateTable('finding')
    .set({ ...set, version: sql<number>`version + 1` })
    .where('id', '=', id)
    .execute()
}

/** Marks findings as not seen by the latest run (closed ones stay closed). */
export async function markAbsent(trx: Trx, ids: number[]) {
  for (const batch of batchesOf(ids, 5000))
    await trx.updateTable('finding').set({ present: false }).where('id', 'in', batch).execute()
}

function findingTables(db: Q) {
  return db
    .selectFrom('finding as f')
    .innerJoin('reconciliation_source as s', 's.id', 'f.source_id')
    .leftJoin('app_user as ack', 'ack.id', 'f.acknowledged_by')
    .leftJoin('app_user as res', 'res.id', 'f.resolved_by')
}

function findingColumns(q: ReturnType<typeof findingTables>) {
  return q
    .selectAll('f')
    .select([
      's.name as source_name',
      's.kind as source_kind',
      'ack.display_name as ack_name',
      'res.display_name as res_name',
    ])
}

function findingQuery(db: Q) {
  return findingColumns(findingTables(db))
}
export type FindingView = Awaited<ReturnType<ReturnType<typeof findingQuery>['executeTakeFirstOrThrow']>>

export function findFinding(db: Q, id: number) {
  return findingQuery(db).where('f.id', '=', id).executeTakeFirst()
}
export function lockFinding(trx: Trx, id: number) {
  return trx.selectFrom('finding').selectAll().where('id', '=', id).forUpdate().executeTakeFirst()
}

export interface FindingFilter {
  siteIds: number[]
  sourceIds?: number[]
  limitIds?: number[]
  kinds?: FindingKind[]
  states?: FindingState[]
  q?: string
}

export async function listFindings(db: Q, f: FindingFilter, page: { limit: number; offset: number }) {
  if (!f.siteIds.length) return { rows: [], total: 0 }
  let q = findingTables(db).where('f.site_id', 'in', f.siteIds)
  if (f.sourceIds?.length) q = q.where('f.source_id', 'in', f.sourceIds)
  if (f.limitIds?.length) q = q.where('f.limit_id', 'in', f.limitIds)
  if (f.kinds?.length) q = q.where('f.kind', 'in', f.kinds)
  if (f.states?.length) q = q.where('f.state', 'in', f.states)
  if (f.q) q = q.where('f.tag', 'ilike', `%${f.q.replace(/[\\%_]/g, (ch) => `\\${ch}`)}%`)
  return pageWithTotal(q, page, (filtered) =>
    findingColumns(filtered)
      .orderBy(sql`CASE f.state WHEN 'open' THEN 0 WHEN 'acknowledged' THEN 1 ELSE 2 END`)
      .orderBy('f.opened_at', 'desc')
      .orderBy('f.id', 'desc'),
  )
}

export function openFindingsForFigures(db: Q, siteIds: number[]) {
  return db
    .selectFrom('finding')
    .select(['kind', 'opened_at'])
    .where('site_id', 'in', siteIds)
    .where('state', 'in', ['open', 'acknowledged'])
    .execute()
}

export function changesWithoutMocSince(db: Q, siteIds: number[], since: Date) {
  return db
    .selectFrom('finding')
    .select(['first_seen_at'])
    .where('site_id', 'in', siteIds)
    .where('kind', '=', 'changed_without_moc')
    .where('first_seen_at', '>=', since)
    .execute()
}

/** Whether a change request of the site exists, its state, and whether it has an item on the limit. */
export async function findChangeRequestFor(db: Q, id: number, limitId: number | null) {
  const cr = await db
    .selectFrom('change_request')
    .select(['id', 'site_id', 'status'])
    .where('id', '=', id)
    .executeTakeFirst()
  if (!cr) return null
  const onLimit =
    limitId === null
      ? true
      : !!(await db
          .selectFrom('change_request_item')
          .select('id')
          .where('change_request_id', '=', id)
          .where('limit_id', '=', limitId)
          .executeTakeFirst())
  return { ...cr, onLimit }
}

// ---- the limit page ----

export async function upsertLimitReconciliations(
  trx: Trx,
  rows: { limit_id: number; source_id: number; run_id: number; at: Date; matched: boolean; differences: string }[],
) {
  for (const batch of batchesOf(rows, 2000))
    await trx
      .insertInto('limit_reconciliation')
      .values(batch)
      .onConflict((oc) =>
        oc.columns(['limit_id', 'source_id']).doUpdateSet((eb) => ({
          run_id: eb.ref('excluded.run_id'),
          at: eb.ref('excluded.at'),
          matched: eb.ref('excluded.matched'),
          differences: eb.ref('excluded.differences'),
        })),
      )
      .execute()
}

export function limitReconciliations(db: Q, limitId: number) {
  return db
    .selectFrom('limit_reconciliation as lr')
    .innerJoin('reconciliation_source as s', 's.id', 'lr.source_id')
    .select(['lr.source_id', 's.name', 'lr.run_id', 'lr.at', 'lr.matched', 'lr.differences'])
    .where('lr.limit_id', '=', limitId)
    .orderBy('lr.at', 'desc')
    .execute()
}

export function findLimitSite(db: Q, limitId: number) {
  return db.selectFrom('limit_function').select(['id', 'site_id']).where('id', '=', limitId).executeTakeFirst()
}

export function findSitePolicy(db: Q, siteId: number) {
  return db.selectFrom('site').select(['id', 'policy']).where('id', '=', siteId).executeTakeFirst()
}

/** Those of these areas that belong to the site. */
export function findAreaIdsOfSite(db: Q, siteId: number, areaIds: number[]) {
  return db.selectFrom('area').select('id').where('site_id', '=', siteId).where('id', 'in', areaIds).execute()
}

/** Another source of the site with this name (other than `exceptId`). */
export function findSourceByName(db: Q, siteId: number, name: string, exceptId?: number) {
  let q = db.selectFrom('reconciliation_source').select('id').where('site_id', '=', siteId).where('name', '=', name)
  if (exceptId !== undefined) q = q.where('id', '!=', exceptId)
  return q.executeTakeFirst()
}

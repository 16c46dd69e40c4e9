import { type Kysely, type SelectQueryBuilder, sql, type Transaction } from 'kysely'
import type { Insertable, Updateable } from 'kysely'
import type { Database, LimitFunctionTable, LimitRevisionTable } from '../../db/schema.ts'
import type { LimitListRow } from './register.mappers.ts'
import type { Limit } from '../../../shared/schemas/register.ts'
import { findIdByTag } from './tags.repository.ts'
import { idsOrNone } from '../../db/ids.ts'

type ProtectionState = Limit['protectionState']

type Q = Kysely<Database> | Transaction<Database>

/** Register filters after parsing (ids already limited to the user's sites). */
export interface LimitFilters {
  siteIds: number[]
  areaIds?: number[]
  processIds?: number[]
  instrumentIds?: number[]
  limitClass?: string[]
  direction?: string[]
  sil?: (number | 'none')[]
  status?: string[]
  protectionState?: string[]
  testStatus?: string[]
  hasWarnings?: boolean
  hasErrors?: boolean
  q?: string
}

/** What an alarm does of a limit: where it acts, with its deadband and delays. */
export const ALARM_SETTING_COLUMNS = [
  'limit_function.setpoint',
  'limit_function.deadband',
  'limit_function.deadband_unit',
  'limit_function.on_delay_sec',
  'limit_function.off_delay_sec',
  'limit_function.latching',
] as const

export const LIMIT_SORT_COLUMNS = {
  tag: 'limit_function.tag',
  setpoint: 'limit_function.setpoint',
  sil: 'limit_function.sil',
  priority: 'limit_function.priority',
  status: 'limit_function.status',
  updatedAt: 'limit_function.updated_at',
  limitClass: 'limit_function.limit_class',
  direction: 'limit_function.direction',
  testDueDate: 'limit_function.test_due_date',
} as const
export type LimitSortField = keyof typeof LIMIT_SORT_COLUMNS

/** Limits with their process, area, site and primary instrument (`pi`): the register's rows and the response sheets. */
export function limitsWithPlace(db: Q) {
  return db
    .selectFrom('limit_function')
    .innerJoin('process', 'process.id', 'limit_function.process_id')
    .innerJoin('area', 'area.id', 'limit_function.area_id')
    .innerJoin('site', 'site.id', 'limit_function.site_id')
    .innerJoin('instrument as pi', 'pi.id', 'limit_function.primary_instrument_id')
}

type Base = ReturnType<typeof limitsWithPlace>

export function applyFilters<O>(q: SelectQueryBuilder<any, any, O>, f: LimitFilters): SelectQueryBuilder<any, any, O> {
  let query = q.where('limit_function.site_id', 'in', idsOrNone(f.siteIds))
  if (f.areaIds?.length) query = query.where('limit_function.area_id', 'in', f.areaIds)
  if (f.processIds?.length) query = query.where('limit_function.process_id', 'in', f.processIds)
  if (f.instrumentIds?.length) {
    query = query.where((eb) =>
      eb.exists(
        eb
          .selectFrom('limit_instrument')
          .select('limit_instrument.limit_id')
          .whereRef('limit_instrument.limit_id', '=', 'limit_function.id')
          .where('limit_instrument.instrument_id', 'in', f.instrumentIds!),
      ),
    )
  }
  if (f.limitClass?.length) query = query.where('limit_function.limit_class', 'in', f.limitClass)
  if (f.direction?.length) query = query.where('limit_function.direction', 'in', f.direction)
  if (f.sil?.length) {
    const levels = f.sil.filter((s): s is number => s !== 'none')
    const none = f.sil.includes('none')
    query = query.where((eb) =>
      eb.or([
        ...(levels.length ? [eb('limit_function.sil', 'in', levels)] : []),
        ...(none ? [eb('limit_function.sil', 'is', null)] : []),
      ]),
    )
  }
  if (f.status?.length) query = query.where('limit_function.status', 'in', f.status)
  if (f.protectionState?.length) query = query.where('limit_function.protection_state', 'in', f.protectionState)
  if (f.testStatus?.length) query = query.where('limit_function.test_status', 'in', f.testStatus)
  if (f.hasWarnings !== undefined) query = query.where('limit_function.has_window_warnings', '=', f.hasWarnings)
  if (f.hasErrors !== undefined) query = query.where('limit_function.has_window_errors', '=', f.hasErrors)
  if (f.q)
    query = query.where(
      'limit_function.search_text',
      'like',
      `%${f.q.toLowerCase().replace(/[\\%_]/g, (c) => `\\${c}`)}%`,
    )
  return query
}

function selectListColumns(q: Base) {
  return q
    .selectAll('limit_function')
    .select([
      'process.name as process_name',
      'area.name as area_name',
      'site.code as site_code',
      'pi.tag as pi_tag',
      'pi.unit as pi_unit',
      'pi.measured_variable as pi_variable',
      'pi.range_low as pi_range_low',
      'pi.range_high as pi_range_high',
    ])
}

const NULLABLE_SORT = new Set<LimitSortField>(['sil', 'priority', 'testDueDate'])

type Sort = { field: LimitSortField; desc: boolean }[]
type PageSpec = { limit: number; offset?: number; after?: { values: unknown[]; id: number } }

/** ORDER BY the sort, ending on id so pages are stable. */
function orderBySort<T extends SelectQueryBuilder<any, any, any>>(q: T, sort: Sort): T {
  const order = sort.length ? sort : [{ field: 'tag' as const, desc: false }]
  let r = q
  // NULLS LAST only where a column can be empty: on NOT NULL columns it would keep a plain index from giving the order
  for (const s of order) {
    r = r.orderBy(sql.ref(LIMIT_SORT_COLUMNS[s.field]), (ob) =>
      NULLABLE_SORT.has(s.field)
        ? s.desc
          ? ob.desc().nullsLast()
          : ob.asc().nullsLast()
        : s.desc
          ? ob.desc()
          : ob.asc(),
    ) as T
  }
  return r.orderBy('limit_function.id', order[order.length - 1].desc ? 'desc' : 'asc') as T
}

/**
 * The ids of one page, chosen on limit_function alone (an index can give the order and the sort stays bounded):
 * `offset` for page numbers, or `after` (the sort value and id of the last row seen) for keyset paging that stays
 * fast deep into 100,000 rows.
 */
function pageIds(db: Q, f: LimitFilters, sort: Sort, page: PageSpec) {
  let ids = applyFilters(db.selectFrom('limit_function').select('limit_function.id'), f)
  if (page.after && sort.length <= 1) {
    const col = LIMIT_SORT_COLUMNS[sort[0]?.field ?? 'tag']
    const op = sort[0]?.desc ? '<' : '>'
    ids = ids.where(
      sql<boolean>`(${sql.ref(col)}, limit_function.id) ${sql.raw(op)} (${page.after.values[0]}, ${page.after.id})`,
    )
  }
  ids = orderBySort(ids, sort).limit(page.limit)
  if (page.offset) ids = ids.offset(page.offset)
  return ids
}

/** One page of the register as whole rows, joined with names, the primary instrument and the voted instruments. */
export async function listLimits(
  db: Q,
  f: LimitFilters,
  sort: Sort,
  page: PageSpec,
): Promise<(LimitListRow & { instrument_ids: number[] })[]> {
  const q = orderBySort(
    selectListColumns(limitsWithPlace(db))
      .select((eb) =>
        eb
          .fn<number[]>('array', [
            eb
              .selectFrom('limit_instrument')
              .select('limit_instrument.instrument_id')
              .whereRef('limit_instrument.limit_id', '=', 'limit_function.id')
              .orderBy('limit_instrument.position'),
          ])
          .as('instrument_ids'),
      )
      .where('limit_function.id', 'in', pageIds(db, f, sort, page)),
    sort,
  )
  return (await q.execute()) as (LimitListRow & { instrument_ids: number[] })[]
}

/**
 * One page of the register screen's rows (shared `RegisterRow`), each built as JSON text by PostgreSQL, with the
 * value of the first sort column (for the next keyset cursor).
 */
export async function listRegisterRows(
  db: Q,
  f: LimitFilters,
  sort: Sort,
  page: PageSpec,
): Promise<{ id: number; sort_value: unknown; json: string }[]> {
  const first = LIMIT_SORT_COLUMNS[sort[0]?.field ?? 'tag']
  const q = orderBySort(
    limitsWithPlace(db)
      .select([
        'limit_function.id',
        sql.ref(first).as('sort_value'),
        sql<string>`json_build_object(
          'id', limit_function.id, 'siteId', limit_function.site_id, 'siteCode', site.code,
          'areaName', area.name, 'processName', process.name, 'tag', limit_function.tag,
          'description', limit_function.description, 'limitClass', limit_function.limit_class,
          'direction', limit_function.direction, 'setpoint', limit_function.setpoint,
          'deadband', limit_function.deadband, 'deadbandUnit', limit_function.deadband_unit,
          'sil', limit_function.sil, 'priority', limit_function.priority, 'status', limit_function.status,
          'protectionState', limit_function.protection_state, 'testStatus', limit_function.test_status,
          'testDueDate', limit_function.test_due_date,
          'operatingWindow', json_build_object('errors', limit_function.window_errors,
            'warnings', limit_function.window_warnings),
          'primaryInstrument', json_build_object('id', pi.id, 'tag', pi.tag, 'unit', pi.unit,
            'rangeLow', pi.range_low, 'rangeHigh', pi.range_high),
          'instrumentCount', (SELECT count(*) FROM limit_instrument li WHERE li.limit_id = limit_function.id)
        )::text`.as('json'),
      ])
      .where('limit_function.id', 'in', pageIds(db, f, sort, page)),
    sort,
  )
  return (await q.execute()) as { id: number; sort_value: unknown; json: string }[]
}

/** Counts matching rows, stopping at `cap` (the count of a huge filtered set is shown as "cap+"). */
export async function countLimits(db: Q, f: LimitFilters, cap: number): Promise<number> {
  const inner = applyFilters(db.selectFrom('limit_function').select(sql`1`.as('one')), f).limit(cap + 1)
  const row = await db
    .selectFrom(inner.as('m'))
    .select((eb) => eb.fn.countAll<number>().as('n'))
    .executeTakeFirstOrThrow()
  return Number(row.n)
}

export async function findLimitById(db: Q, id: number, lock = false): Promise<LimitListRow | undefined> {
  let q = selectListColumns(limitsWithPlace(db)).where('limit_function.id', '=', id)
  if (lock) q = q.forUpdate(['limit_function'])
  return (await q.executeTakeFirst()) as LimitListRow | undefined
}

/** The site's limits with these lower-case tags, in the register row shape, locked for update. */
export function lockLimitsByTags(trx: Transaction<Database>, siteId: number, lowerTags: string[]) {
  return selectListColumns(limitsWithPlace(trx))
    .where('limit_function.site_id', '=', siteId)
    .where(sql<string>`lower(limit_function.tag)`, 'in', lowerTags)
    .forUpdate(['limit_function'])
    .execute()
}

export async function findInstrumentIdsByLimitIds(db: Q, ids: number[]): Promise<Map<number, number[]>> {
  const map = new Map<number, number[]>()
  if (!ids.length) return map
  const rows = await db
    .selectFrom('limit_instrument')
    .select(['limit_id', 'instrument_id'])
    .where('limit_id', 'in', ids)
    .orderBy('limit_id')
    .orderBy('position')
    .execute()
  for (const r of rows) map.set(r.limit_id, [...(map.get(r.limit_id) ?? []), r.instrument_id])
  return map
}

export async function replaceLimitInstruments(trx: Transaction<Database>, limitId: number, instrumentIds: number[]) {
  await trx.deleteFrom('limit_instrument').where('limit_id', '=', limitId).execute()
  await trx
    .insertInto('limit_instrument')
    .values(instrumentIds.map((instrument_id, position) => ({ limit_id: limitId, position, instrument_id })))
    .execute()
}

/** Other limits whose primary instrument is this one (the siblings of the operating-window check). */
export function findSiblingLimits(db: Q, instrumentId: number) {
  return db
    .selectFrom('limit_function')
    .select(['id', 'tag', 'direction', 'limit_class', 'setpoint', 'status'])
    .where('primary_instrument_id', '=', instrumentId)
    .execute()
}

/** The site's stored policy overrides (inside the caller's transaction). */
export function findSitePolicyRow(db: Q, siteId: number) {
  return db.selectFrom('site').select('policy').where('id', '=', siteId).executeTakeFirstOrThrow()
}

export function findInstrumentRows(db: Q, ids: number[]) {
  return db.selectFrom('instrument').selectAll().where('id', 'in', ids).execute()
}

export function insertLimitRevision(db: Q, values: Insertable<LimitRevisionTable>) {
  return db.insertInto('limit_revision').values(values).execute()
}

export async function insertLimitRow(db: Q, values: Insertable<LimitFunctionTable>): Promise<number> {
  return (await db.insertInto('limit_function').values(values).returning('id').executeTakeFirstOrThrow()).id
}

/** A limit of the site with this tag (case-insensitive), other than `exceptId`. */
export function findLimitIdByTag(db: Q, siteId: number, tag: string, exceptId: number | null) {
  return findIdByTag(db, 'limit_function', siteId, tag, exceptId)
}

export function updateLimitRow(db: Q, id: number, set: Updateable<LimitFunctionTable>) {
  return db.updateTable('limit_function').set(set).where('id', '=', id).execute()
}

export function deleteLimitRow(db: Q, id: number) {
  return db.deleteFrom('limit_function').where('id', '=', id).execute()
}

/** Ids of the limits, other than retired ones, whose primary instrument this is. */
export function findUnretiredLimitIdsOnInstrument(db: Q, instrumentId: number) {
  return db
    .selectFrom('limit_function')
    .select('id')
    .where('primary_instrument_id', '=', instrumentId)
    .where('status', '!=', 'retired')
    .execute()
}

/** The revisions of a limit, newest first, with the name of who made each. */
export function listLimitRevisions(db: Q, limitId: number) {
  return db
    .selectFrom('limit_revision')
    .leftJoin('app_user', 'app_user.id', 'limit_revision.changed_by')
    .select([
      'limit_revision.revision',
      'limit_revision.snapshot',
      'limit_revision.changed_at',
      'limit_revision.change_request_id',
      'limit_revision.reason',
      'app_user.display_name',
    ])
    .where('limit_id', '=', limitId)
    .orderBy('revision', 'desc')
    .execute()
}

/** Whether a bypass of the limit is active, and whether a degradation of it is not cleared (one statement). */
export async function findProtectionFacts(db: Q, limitId: number) {
  const { rows } = await sql<{ bypassed: boolean; degraded: boolean }>`
    SELECT EXISTS (SELECT 1 FROM bypass WHERE limit_id = ${limitId} AND status = 'active') AS bypassed,
      EXISTS (SELECT 1 FROM limit_degradation WHERE limit_id = ${limitId} AND cleared_at IS NULL) AS degraded
  `.execute(db)
  return rows[0]
}

/** Sets the limit's protection-state column, writing only when it differs. */
export function setProtectionState(db: Q, limitId: number, state: ProtectionState) {
  return db
    .updateTable('limit_function')
    .set({ protection_state: state })
    .where('id', '=', limitId)
    .where('protection_state', '!=', state)
    .execute()
}

import type { Kysely, Transaction } from 'kysely'
import { sql } from 'kysely'
import type { Database, DemandKind, DemandOutcome } from '../../db/schema.ts'
import { pageWithTotal } from '../../db/paging.ts'
import { idsOrNone } from '../../db/ids.ts'

type Db = Kysely<Database> | Transaction<Database>

/** The limit an event is recorded on, with its site's policy. */
export function findLimitForDemand(db: Db, limitId: number) {
  return db
    .selectFrom('limit_function')
    .innerJoin('site', 'site.id', 'limit_function.site_id')
    .select(['limit_function.id', 'limit_function.site_id', 'limit_function.tag', 'site.policy'])
    .where('limit_function.id', '=', limitId)
    .executeTakeFirst()
}

/** Whether an instrument belongs to a limit (any of its channels). */
export async function instrumentOfLimit(db: Db, limitId: number, instrumentId: number): Promise<boolean> {
  const row = await db
    .selectFrom('limit_instrument')
    .select('instrument_id')
    .where('limit_id', '=', limitId)
    .where('instrument_id', '=', instrumentId)
    .executeTakeFirst()
  return row !== undefined
}

export interface NewDemand {
  siteId: number
  limitId: number
  instrumentId: number | null
  kind: DemandKind
  outcome: DemandOutcome | null
  occurredAt: Date
  description: string
  cause: string
  evidence: string
  workOrder: string
  wholeFunction: boolean
  recordedBy: number
  imported?: boolean
  now: Date
}

export async function insertDemand(trx: Transaction<Database>, d: NewDemand): Promise<number> {
  const row = await trx
    .insertInto('demand')
    .values({
      site_id: d.siteId,
      limit_id: d.limitId,
      instrument_id: d.instrumentId,
      kind: d.kind,
      outcome: d.outcome,
      occurred_at: d.occurredAt,
      description: d.description,
      cause: d.cause,
      evidence: d.evidence,
      work_order: d.workOrder,
      whole_function: d.wholeFunction,
      imported: d.imported ?? false,
      recorded_by: d.recordedBy,
      created_at: d.now,
      updated_at: d.now,
    })
    .returning('id')
    .executeTakeFirstOrThrow()
  return row.id
}

/** One event with its site's policy; inside a transaction pass `lock` to hold it (SELECT … FOR UPDATE). */
export function findDemandFacts(db: Db, id: number, lock = false) {
  const query = db
    .selectFrom('demand')
    .innerJoin('site', 'site.id', 'demand.site_id')
    .selectAll('demand')
    .select('site.policy')
    .where('demand.id', '=', id)
  return (lock ? query.forUpdate('demand') : query).executeTakeFirst()
}

export function classifyDemandRow(
  trx: Transaction<Database>,
  id: number,
  c: { counts: boolean; dangerousUndetected: boolean; note: string; by: number; now: Date },
) {
  return trx
    .updateTable('demand')
    .set({
      status: 'classified',
      counts: c.counts,
      dangerous_undetected: c.dangerousUndetected,
      classification_note: c.note,
      classified_by: c.by,
      classified_at: c.now,
      updated_at: c.now,
    })
    .where('id', '=', id)
    .execute()
}

export function creditDemandRow(trx: Transaction<Database>, id: number, c: { note: string; by: number; now: Date }) {
  return trx
    .updateTable('demand')
    .set({ credited_as_test: true, credit_note: c.note, credited_by: c.by, credited_at: c.now, updated_at: c.now })
    .where('id', '=', id)
    .execute()
}

export interface DemandFilter {
  siteIds: number[]
  limitIds?: number[]
  kinds?: DemandKind[]
  from?: Date
  to?: Date
  q?: string
}

function filtered(db: Db, f: DemandFilter) {
  let query = db
    .selectFrom('demand')
    .innerJoin('limit_function as l', 'l.id', 'demand.limit_id')
    .where('demand.site_id', 'in', idsOrNone(f.siteIds))
  if (f.limitIds?.length) query = query.where('demand.limit_id', 'in', f.limitIds)
  if (f.kinds?.length) query = query.where('demand.kind', 'in', f.kinds)
  if (f.from) query = query.where('demand.occurred_at', '>=', f.from)
  if (f.to) query = query.where('demand.occurred_at', '<', f.to)
  if (f.q) query = query.where('l.tag', 'ilike', `%${f.q}%`)
  return query
}

/** One page of events, newest first, and the total. */
export async function listDemandRows(db: Db, f: DemandFilter, page: number, pageSize: number) {
  const { rows, total } = await pageWithTotal(filtered(db, f), { page, pageSize }, (q) =>
    q.select('demand.id').orderBy('demand.occurred_at', 'desc').orderBy('demand.id', 'desc'),
  )
  return { ids: rows.map((r) => r.id), total }
}

/** Full rows for the API, with names and tags. */
export function loadDemandRows(db: Db, ids: number[]) {
  return db
    .selectFrom('demand')
    .innerJoin('site', 'site.id', 'demand.site_id')
    .innerJoin('limit_function as l', 'l.id', 'demand.limit_id')
    .leftJoin('instrument as i', 'i.id', 'demand.instrument_id')
    .innerJoin('app_user as r', 'r.id', 'demand.recorded_by')
    .leftJoin('app_user as c', 'c.id', 'demand.classified_by')
    .leftJoin('app_user as k', 'k.id', 'demand.credited_by')
    .selectAll('demand')
    .select([
      'site.code as site_code',
      'site.policy',
      'l.tag as limit_tag',
      'i.tag as instrument_tag',
      'r.display_name as recorded_by_name',
      'c.display_name as classified_by_name',
      'k.display_name as credited_by_name',
    ])
    .where('demand.id', 'in', idsOrNone(ids))
    .execute()
}

/** Counted demands and spurious trips per limit in a period, with the limit's assumptions. */
export function demandCountsByLimit(db: Db, siteIds: number[], from: Date, to: Date, limitIds?: number[]) {
  let q = db
    .selectFrom('limit_function as l')
    .innerJoin('site', 'site.id', 'l.site_id')
    .leftJoin('demand as d', (join) =>
      join
        .onRef('d.limit_id', '=', 'l.id')
        .on('d.occurred_at', '>=', from)
        .on('d.occurred_at', '<', to)
        .on((eb) => eb.or([eb('d.counts', 'is', null), eb('d.counts', '=', true)])),
    )
    .select((eb) => [
      'l.id',
      'l.tag',
      'l.site_id',
      'site.code as site_code',
      'l.created_at',
      'l.sil',
      'l.commissioned_at',
      'l.assumed_demand_rate_per_year',
      'l.assumed_spurious_rate_per_year',
      eb.fn.count<string>('d.id').filterWhere('d.kind', 'in', ['real_demand', 'failure_on_demand']).as('demands'),
      eb.fn.count<string>('d.id').filterWhere('d.kind', '=', 'spurious_trip').as('spurious'),
    ])
    .where('l.site_id', 'in', idsOrNone(siteIds))
    .where('l.status', '=', 'active')
    .where((eb) =>
      eb.or([
        eb('l.sil', 'is not', null),
        eb('l.assumed_demand_rate_per_year', 'is not', null),
        eb.exists(eb.selectFrom('demand').select('demand.id').whereRef('demand.limit_id', '=', 'l.id')),
      ]),
    )
    .groupBy(['l.id', 'site.code'])
    .orderBy('l.tag')
  if (limitIds?.length) q = q.where('l.id', 'in', limitIds)
  return q.execute()
}

/** The hazard-study rates and the commissioning date kept on a limit. */
export function findLimitAssumptions(db: Db, limitId: number, lock = false) {
  let q = db
    .selectFrom('limit_function')
    .select([
      'id',
      'site_id',
      'tag',
      'status',
      'sil',
      'assumed_demand_rate_per_year',
      'assumed_spurious_rate_per_year',
      'commissioned_at',
    ])
    .where('id', '=', limitId)
  if (lock) q = q.forUpdate()
  return q.executeTakeFirst()
}

export function updateLimitAssumptions(
  trx: Transaction<Database>,
  limitId: number,
  a: { demand: string | null; spurious: string | null; commissionedAt: string | null; now: Date },
) {
  return trx
    .updateTable('limit_function')
    .set({
      assumed_demand_rate_per_year: a.demand,
      assumed_spurious_rate_per_year: a.spurious,
      commissioned_at: a.commissionedAt,
      updated_at: a.now,
    })
    .where('id', '=', limitId)
    .execute()
}

// ---- observed failure rates per device kind and model (docs/domain/observed-rates.md#failure-rates-of-device-models)

/** Instruments that are a channel of an active limit, with the earliest commissioning date among their limits. */
export function instrumentsInService(db: Db, siteIds: number[]) {
  return db
    .selectFrom('instrument as i')
    .innerJoin('site', 'site.id', 'i.site_id')
    .select((eb) => [
      'i.id',
      'i.tag',
      'i.site_id',
      'i.device_kind',
      'i.model',
      'i.created_at',
      eb
        .selectFrom('limit_instrument as li')
        .innerJoin('limit_function as l', 'l.id', 'li.limit_id')
        .select((e) => e.fn.min('l.commissioned_at').as('c'))
        .whereRef('li.instrument_id', '=', 'i.id')
        .as('commissioned_at'),
    ])
    .where('i.site_id', 'in', idsOrNone(siteIds))
    .where((eb) =>
      eb.exists(
        eb
          .selectFrom('limit_instrument as li')
          .innerJoin('limit_function as l', 'l.id', 'li.limit_id')
          .select('li.limit_id')
          .whereRef('li.instrument_id', '=', 'i.id')
          .where('l.status', '=', 'active'),
      ),
    )
    .orderBy('i.tag')
    .execute()
}

/**
 * Signed tests of the trip point in a period whose as-found result, or a channel's, was dangerous (tripped late or
 * not at all): failures found at a proof test.
 */
export function dangerousAsFoundTests(db: Db, siteIds: number[], from: Date, to: Date) {
  return db
    .selectFrom('trip_test as t')
    .innerJoin('limit_function as l', 'l.id', 't.limit_id')
    .select(['t.id', 't.performed_at', 't.channels', 't.as_found_result', 'l.primary_instrument_id'])
    .where('t.site_id', 'in', idsOrNone(siteIds))
    .where('t.status', 'in', ['signed', 'completed'])
    .where('t.scope', 'in', ['function', 'sensor'])
    .where('t.performed_at', '>=', from)
    .where('t.performed_at', '<', to)
    .where((eb) =>
      eb.or([
        eb('t.as_found_result', 'in', ['out_dangerous', 'no_trip']),
        sql<boolean>`t.channels::text ~ '"asFoundResult": ?"(out_dangerous|no_trip)"'`,
      ]),
    )
    .execute()
}

/** Failures found in operation or on demand that an engineer classified as dangerous undetected, in a period. */
export function dangerousUndetectedDemands(db: Db, siteIds: number[], from: Date, to: Date) {
  return db
    .selectFrom('demand')
    .select(['id', 'kind', 'instrument_id', 'occurred_at'])
    .where('site_id', 'in', idsOrNone(siteIds))
    .where('kind', 'in', ['dangerous_failure', 'failure_on_demand'])
    .where('dangerous_undetected', '=', true)
    .where('counts', '=', true)
    .where('occurred_at', '>=', from)
    .where('occurred_at', '<', to)
    .execute()
}

/** Active SIL-rated limits with their subsystems and channels, for the assumed λDU of their sensors. */
export function silLimitsWithChannels(db: Db, siteIds: number[]) {
  return db
    .selectFrom('limit_function as l')
    .innerJoin('site', 'site.id', 'l.site_id')
    .select((eb) => [
      'l.id',
      'l.tag',
      'l.site_id',
      'site.code as site_code',
      'l.sil',
      'l.subsystems',
      'l.primary_instrument_id',
      eb
        .selectFrom('limit_instrument as li')
        .select(sql<number[]>`coalesce(array_agg(li.instrument_id), '{}')`.as('ids'))
        .whereRef('li.limit_id', '=', 'l.id')
        .as('channel_ids'),
    ])
    .where('l.site_id', 'in', idsOrNone(siteIds))
    .where('l.status', '=', 'active')
    .where('l.sil', 'is not', null)
    .orderBy('l.tag')
    .execute()
}

export function limitSubsystems(db: Db, limitId: number) {
  return db.selectFrom('limit_function').select(['subsystems']).where('id', '=', limitId).executeTakeFirstOrThrow()
}

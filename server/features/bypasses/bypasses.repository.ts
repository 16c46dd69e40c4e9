import type { Kysely, NotNull, Transaction, Updateable } from 'kysely'
import type { BypassStatus } from '../../../shared/schemas/bypasses.ts'
import type { BypassTable, Database } from '../../db/schema.ts'
import { pageWithTotal } from '../../db/paging.ts'
import { idsOrNone } from '../../db/ids.ts'

// Every query of the bypass workflow, its deadlines job and the plant manager's review (docs/bypasses.md).

type Q = Kysely<Database> | Transaction<Database>
export const BYPASS_ENTITY = 'Bypass'

/** The limit a bypass is requested for, with its site's policy and time zone. */
export function findLimitForBypass(db: Q, limitId: number) {
  return db
    .selectFrom('limit_function')
    .innerJoin('site', 'site.id', 'limit_function.site_id')
    .select([
      'limit_function.id',
      'limit_function.tag',
      'limit_function.site_id',
      'limit_function.status',
      'limit_function.limit_class',
      'limit_function.sil',
      'limit_function.bypass_permitted',
      'limit_function.max_bypass_hours',
      'limit_function.compensating_measures',
      'site.policy',
      'site.time_zone',
    ])
    .where('limit_function.id', '=', limitId)
    .executeTakeFirst()
}

/** Instruments voting in a limit (a single channel of a voted function may be bypassed on its own). */
export async function findLimitChannelIds(db: Q, limitId: number): Promise<number[]> {
  const rows = await db.selectFrom('limit_instrument').select('instrument_id').where('limit_id', '=', limitId).execute()
  return rows.map((r) => r.instrument_id)
}

/** The change request a long bypass is linked to. */
export function findLinkableChange(db: Q, changeRequestId: number) {
  return db
    .selectFrom('change_request')
    .select(['type', 'status', 'site_id', 'expires_at'])
    .where('id', '=', changeRequestId)
    .executeTakeFirst()
}

export function insertBypass(
  trx: Transaction<Database>,
  row: {
    limitId: number
    siteId: number
    channelInstrumentId: number | null
    requestedBy: number
    reason: string
    measures: string[]
    plannedStart: Date
    plannedEnd: Date
    changeRequestId: number | null
    now: Date
  },
) {
  return trx
    .insertInto('bypass')
    .values({
      limit_id: row.limitId,
      site_id: row.siteId,
      channel_instrument_id: row.channelInstrumentId,
      requested_by: row.requestedBy,
      reason: row.reason,
      compensating_measures: JSON.stringify(row.measures),
      planned_start: row.plannedStart,
      planned_end: row.plannedEnd,
      change_request_id: row.changeRequestId,
      created_at: row.now,
      updated_at: row.now,
    })
    .returning('id')
    .executeTakeFirstOrThrow()
}

/** The site a bypass belongs to (for the ability check before anything else). */
export function findBypassSite(db: Q, id: number) {
  return db.selectFrom('bypass').select(['id', 'site_id']).where('id', '=', id).executeTakeFirst()
}

/** The bypass row, locked for the rest of the transaction. */
export function lockBypass(trx: Transaction<Database>, id: number) {
  return trx.selectFrom('bypass').selectAll().where('id', '=', id).forUpdate().executeTakeFirst()
}

export async function updateBypass(trx: Transaction<Database>, id: number, set: Updateable<BypassTable>) {
  await trx.updateTable('bypass').set(set).where('id', '=', id).execute()
}

/** Bypass rows with everything a BypassDto shows. */
export function selectBypassRows(db: Q, ids: number[]) {
  return db
    .selectFrom('bypass')
    .innerJoin('limit_function', 'limit_function.id', 'bypass.limit_id')
    .innerJoin('site', 'site.id', 'bypass.site_id')
    .innerJoin('area', 'area.id', 'limit_function.area_id')
    .innerJoin('process', 'process.id', 'limit_function.process_id')
    .innerJoin('app_user as rq', 'rq.id', 'bypass.requested_by')
    .leftJoin('app_user as act', 'act.id', 'bypass.activated_by')
    .leftJoin('app_user as rm', 'rm.id', 'bypass.removed_by')
    .leftJoin('instrument as ch', 'ch.id', 'bypass.channel_instrument_id')
    .selectAll('bypass')
    .select([
      'limit_function.tag',
      'limit_function.limit_class',
      'limit_function.sil',
      'limit_function.area_id',
      'limit_function.max_bypass_hours',
      'site.code',
      'site.policy',
      'site.time_zone',
      'area.name as area_name',
      'process.name as process_name',
      'rq.display_name as requester',
      'act.display_name as activator',
      'rm.display_name as remover',
      'ch.tag as channel_tag',
    ])
    .where('bypass.id', 'in', ids)
    .execute()
}
export type BypassRow = Awaited<ReturnType<typeof selectBypassRows>>[number]

export interface BypassListQuery {
  siteIds: number[]
  areaIds?: number[]
  processIds?: number[]
  limitIds?: number[]
  requesterIds?: number[]
  authorizerIds?: number[]
  status?: BypassStatus[]
  overdue?: boolean
  /** In force (or, never put in force, planned) at some time in [from, to). */
  from?: Date
  to?: Date
  page: number
  pageSize: number
}

/**
 * Ids of the bypasses matching the filters, newest first, and their count. The period counts the time each bypass was
 * actually in force (from its activation, or its planned start while never activated, to its removal), so a bypass put
 * in force before its planned start is found by the time it was in force.
 */
export async function findBypassIds(db: Q, q: BypassListQuery, now: Date) {
  let base = db
    .selectFrom('bypass')
    .innerJoin('limit_function', 'limit_function.id', 'bypass.limit_id')
    .where('bypass.site_id', 'in', idsOrNone(q.siteIds))
  if (q.areaIds?.length) base = base.where('limit_function.area_id', 'in', q.areaIds)
  if (q.processIds?.length) base = base.where('limit_function.process_id', 'in', q.processIds)
  if (q.limitIds?.length) base = base.where('bypass.limit_id', 'in', q.limitIds)
  if (q.requesterIds?.length) base = base.where('bypass.requested_by', 'in', q.requesterIds)
  const authorizerIds = q.authorizerIds
  if (authorizerIds?.length) {
    base = base.where((eb) =>
      eb.exists(
        eb
          .selectFrom('signature')
          .select('signature.id')
          .where('signature.entity_type', '=', BYPASS_ENTITY)
          .whereRef('signature.entity_id', '=', 'bypass.id')
          .where('signature.meaning', '=', 'authorized')
          .where('signature.user_id', 'in', authorizerIds),
      ),
    )
  }
  if (q.status?.length) base = base.where('bypass.status', 'in', q.status)
  if (q.overdue !== undefined) {
    base = q.overdue
      ? base.where('bypass.status', '=', 'active').where('bypass.planned_end', '<', now)
      : base.where((eb) => eb.or([eb('bypass.status', '!=', 'active'), eb('bypass.planned_end', '>=', now)]))
  }
  const from = q.from
  const to = q.to
  if (from) base = base.where((eb) => eb.or([eb('bypass.removed_at', '>=', from), eb('bypass.removed_at', 'is', null)]))
  if (to)
    base = base.where((eb) =>
      eb.or([
        eb('bypass.activated_at', '<', to),
        eb.and([eb('bypass.activated_at', 'is', null), eb('bypass.planned_start', '<', to)]),
      ]),
    )
  const { rows, total } = await pageWithTotal(base, q, (b) =>
    b.select('bypass.id').orderBy('bypass.created_at', 'desc').orderBy('bypass.id', 'desc'),
  )
  return { total, ids: rows.map((r) => r.id) }
}

/** Bypasses the deadlines job looks at: authorized (may lapse) or active (may warn, be overdue, escalate). */
export function findOpenBypassesForJob(db: Q) {
  return db
    .selectFrom('bypass')
    .innerJoin('site', 'site.id', 'bypass.site_id')
    .innerJoin('limit_function', 'limit_function.id', 'bypass.limit_id')
    .innerJoin('app_user', 'app_user.id', 'bypass.requested_by')
    .select([
      'bypass.id',
      'bypass.status',
      'bypass.site_id',
      'bypass.authorized_at',
      'bypass.planned_start',
      'bypass.planned_end',
      'site.policy',
      'limit_function.tag',
      'app_user.email as requester_email',
    ])
    .where('bypass.status', 'in', ['authorized', 'active'])
    .execute()
}

/** The job's view of one bypass, locked. */
export function lockBypassDeadlines(trx: Transaction<Database>, id: number) {
  return trx
    .selectFrom('bypass')
    .select(['status', 'expiry_warned_at', 'overdue_notified_at', 'last_escalation_at', 'planned_start', 'planned_end'])
    .where('id', '=', id)
    .forUpdate()
    .executeTakeFirstOrThrow()
}

/** Site policies of the review's sites. */
export function findSitePolicies(db: Q, siteIds: number[]) {
  return db.selectFrom('site').select(['id', 'policy']).where('id', 'in', idsOrNone(siteIds)).execute()
}

/** Degradations (failed test until a passing full test) of the review's limits. */
export function findDegradationSpans(db: Q, q: { siteIds: number[]; areaIds?: number[]; limitIds?: number[] }) {
  let query = db
    .selectFrom('limit_degradation')
    .innerJoin('limit_function', 'limit_function.id', 'limit_degradation.limit_id')
    .select(['limit_degradation.opened_at', 'limit_degradation.cleared_at'])
    .where('limit_function.site_id', 'in', idsOrNone(q.siteIds))
  if (q.areaIds?.length) query = query.where('limit_function.area_id', 'in', q.areaIds)
  if (q.limitIds?.length) query = query.where('limit_function.id', 'in', q.limitIds)
  return query.execute()
}

/** Signed tests of the given limits, oldest first, for fault exposure (as-found dangerous and passed). */
export function signedTestOutcomes(db: Q, limitIds: number[]) {
  return db
    .selectFrom('trip_test')
    .select(['limit_id', 'performed_at', 'passed', 'kind', 'as_found_result', 'channels'])
    .where('limit_id', 'in', idsOrNone(limitIds))
    .where('status', 'in', ['signed', 'completed'])
    .orderBy('performed_at')
    .execute()
}

/** Degradation spans of the given limits. */
export function degradationSpansOf(db: Q, limitIds: number[]) {
  return db
    .selectFrom('limit_degradation')
    .select(['limit_id', 'opened_at', 'cleared_at'])
    .where('limit_id', 'in', idsOrNone(limitIds))
    .execute()
}

/** The active limits with a SIL target at these sites (and areas, when given), by tag: the rows of risk erosion. */
export function findSilLimitsForRiskErosion(db: Q, siteIds: number[], areaIds?: number[]) {
  let q = db
    .selectFrom('limit_function')
    .select([
      'id',
      'tag',
      'description',
      'sil',
      'subsystems',
      'test_status',
      'last_full_pass',
      'test_interval_months',
      'created_at',
      'commissioned_at',
      'protection_state',
    ])
    .where('site_id', 'in', idsOrNone(siteIds))
    .where('status', '=', 'active')
    .where('sil', 'is not', null)
    .$narrowType<{ sil: NotNull }>()
  if (areaIds?.length) q = q.where('area_id', 'in', areaIds)
  return q.orderBy('tag').execute()
}

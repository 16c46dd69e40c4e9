// Every query of trip tests, degraded limits and test deferrals. Functions take `db` or a transaction first.
import { type Insertable, type Kysely, sql, type Transaction, type Updateable } from 'kysely'
import type { TestDueStatus } from '../../../shared/domain/due-dates.ts'
import type { DeferralStatus } from '../../../shared/domain/rules/trip-tests.ts'
import type { Role } from '../../../shared/schemas/users.ts'
import type { ComponentScope, TestScope } from '../../../shared/schemas/trip-tests.ts'
import type { Database, LimitDegradationTable, TestDeferralTable, TripTestTable } from '../../db/schema.ts'
import { pageWithTotal } from '../../db/paging.ts'
import { idsOrNone } from '../../db/ids.ts'

type Db = Kysely<Database> | Transaction<Database>

// ---- limits and sites

/** The limit a test is recorded against, with its site's zone and policy and its primary instrument. */
export function findLimitForTest(db: Db, limitId: number) {
  return db
    .selectFrom('limit_function')
    .innerJoin('site', 'site.id', 'limit_function.site_id')
    .innerJoin('instrument', 'instrument.id', 'limit_function.primary_instrument_id')
    .select([
      'limit_function.id',
      'limit_function.tag',
      'limit_function.site_id',
      'limit_function.status',
      'limit_function.direction',
      'limit_function.setpoint',
      'limit_function.revision',
      'limit_function.primary_instrument_id',
      'limit_function.sil',
      'limit_function.subsystems',
      'limit_function.required_response_time_sec',
      'limit_function.test_interval_months',
      'limit_function.test_grace_days',
      'limit_function.code_set_interval',
      'limit_function.description',
      'site.time_zone',
      'site.policy',
      'site.name as site_name',
    ])
    .where('limit_function.id', '=', limitId)
    .executeTakeFirst()
}

/** What the schedules of many limits are computed from: interval, grace, SIL, and the site's zone and policy. */
export function scheduleInputs(db: Db, limitIds: number[]) {
  if (!limitIds.length) return Promise.resolve([])
  return db
    .selectFrom('limit_function')
    .innerJoin('site', 'site.id', 'limit_function.site_id')
    .select([
      'limit_function.id',
      'limit_function.sil',
      'limit_function.test_interval_months',
      'limit_function.test_grace_days',
      'limit_function.code_set_interval',
      'limit_function.commissioned_at',
      'site.time_zone',
      'site.policy',
    ])
    .where('limit_function.id', 'in', limitIds)
    .execute()
}

export function findInstrument(db: Db, id: number) {
  return db.selectFrom('instrument').selectAll().where('id', '=', id).executeTakeFirstOrThrow()
}

/** The channel instruments of a limit, in position order. */
export function findChannelInstruments(db: Db, limitId: number) {
  return db
    .selectFrom('limit_instrument')
    .innerJoin('instrument', 'instrument.id', 'limit_instrument.instrument_id')
    .select(['instrument.id', 'instrument.tag', 'limit_instrument.position'])
    .where('limit_instrument.limit_id', '=', limitId)
    .orderBy('limit_instrument.position')
    .execute()
}

/** Locks a limit's row for the rest of the transaction (one writer of its tests and deferrals at a time). */
export function lockLimit(trx: Transaction<Database>, limitId: number) {
  return trx.selectFrom('limit_function').select('id').where('id', '=', limitId).forUpdate().executeTakeFirst()
}

export async function rolesAt(db: Db, userId: number, siteId: number): Promise<Role[]> {
  const rows = await db
    .selectFrom('role_assignment')
    .select('role')
    .where('user_id', '=', userId)
    .where('site_id', '=', siteId)
    .execute()
  return rows.map((r) => r.role)
}

export function findSite(db: Db, siteId: number) {
  return db
    .selectFrom('site')
    .select(['id', 'name', 'time_zone', 'policy'])
    .where('id', '=', siteId)
    .executeTakeFirstOrThrow()
}

export function listSiteZones(db: Db) {
  return db.selectFrom('site').select(['id', 'time_zone']).execute()
}

export function findBypassLimit(db: Db, bypassId: number) {
  return db.selectFrom('bypass').select(['limit_id']).where('id', '=', bypassId).executeTakeFirst()
}

// ---- trip tests

export function findTripTest(db: Db, id: number) {
  return db.selectFrom('trip_test').selectAll().where('id', '=', id).executeTakeFirst()
}

export function lockTripTest(trx: Transaction<Database>, id: number) {
  return trx.selectFrom('trip_test').selectAll().where('id', '=', id).forUpdate().executeTakeFirst()
}

/** A test with what its page shows beside it: the limit's tag and SIL, the recorder's name, the unit. */
export function findTripTestDetail(db: Db, id: number) {
  return db
    .selectFrom('trip_test')
    .innerJoin('limit_function', 'limit_function.id', 'trip_test.limit_id')
    .innerJoin('app_user', 'app_user.id', 'trip_test.recorded_by')
    .innerJoin('instrument', 'instrument.id', 'limit_function.primary_instrument_id')
    .innerJoin('site', 'site.id', 'trip_test.site_id')
    .selectAll('trip_test')
    .select([
      'limit_function.tag',
      'limit_function.sil',
      'limit_function.required_response_time_sec',
      'app_user.display_name',
      'instrument.unit',
      'site.policy',
    ])
    .where('trip_test.id', '=', id)
    .executeTakeFirst()
}

export function insertTripTest(trx: Transaction<Database>, values: Insertable<TripTestTable>) {
  return trx.insertInto('trip_test').values(values).returningAll().executeTakeFirstOrThrow()
}

export function updateTripTest(trx: Transaction<Database>, id: number, values: Updateable<TripTestTable>) {
  return trx.updateTable('trip_test').set(values).where('id', '=', id).returningAll().executeTakeFirstOrThrow()
}

export interface TripTestListFilter {
  siteIds: number[]
  limitId?: number
  scope?: TestScope
  passed?: boolean
  page: number
  pageSize: number
}

export function listTripTests(db: Db, q: TripTestListFilter) {
  let base = db
    .selectFrom('trip_test')
    .innerJoin('limit_function', 'limit_function.id', 'trip_test.limit_id')
    .innerJoin('app_user', 'app_user.id', 'trip_test.recorded_by')
    .where('trip_test.site_id', 'in', idsOrNone(q.siteIds))
  if (q.limitId) base = base.where('trip_test.limit_id', '=', q.limitId)
  if (q.scope) base = base.where('trip_test.scope', '=', q.scope)
  if (q.passed !== undefined) base = base.where('trip_test.passed', '=', q.passed)
  return pageWithTotal(base, q, (b) =>
    b
      .select([
        'trip_test.id',
        'trip_test.limit_id',
        'trip_test.site_id',
        'limit_function.tag',
        'trip_test.kind',
        'trip_test.scope',
        'trip_test.method',
        'trip_test.performed_at',
        'trip_test.as_found',
        'trip_test.as_found_result',
        'trip_test.as_left',
        'trip_test.as_left_result',
        'trip_test.passed',
        'trip_test.status',
        'trip_test.setpoint',
        'trip_test.tolerance_eu',
        'trip_test.source',
        'trip_test.tester_name',
        'app_user.display_name',
      ])
      .orderBy('trip_test.performed_at', 'desc')
      .orderBy('trip_test.id', 'desc'),
  )
}

/** Signed whole-function tests of a limit, for its due date (component tests have their own intervals). */
/** The signed whole-function tests of many limits. */
export function signedFunctionTestsOf(db: Db, limitIds: number[]) {
  if (!limitIds.length) return Promise.resolve([])
  return db
    .selectFrom('trip_test')
    .select(['id', 'limit_id', 'performed_at', 'kind', 'passed'])
    .where('limit_id', 'in', limitIds)
    .where('scope', '=', 'function')
    .where('status', '!=', 'recorded')
    .execute()
}

/**
 * Real demands credited as a proof test of a limit (a safety engineer signed that the demand covered what the test
 * covers; docs/demands.md): each counts as a passing full test on the day of the demand.
 */
/** The demands credited as proof tests of many limits. */
export function creditedDemandsOf(db: Db, limitIds: number[]) {
  if (!limitIds.length) return Promise.resolve([])
  return db
    .selectFrom('demand')
    .select(['id', 'limit_id', 'occurred_at'])
    .where('limit_id', 'in', limitIds)
    .where('credited_as_test', '=', true)
    .execute()
}

/**
 * The last signed test of each component scope of a limit, and the last passing one, with the component's own
 * interval where one is set: what a PFDavg computed with each subsystem's actual last test needs.
 */
export async function lastComponentTests(db: Db, limitId: number) {
  const rows = await db
    .selectFrom('trip_test')
    .select(['scope', 'performed_at', 'passed'])
    .where('limit_id', '=', limitId)
    .where('status', '!=', 'recorded')
    .orderBy('performed_at', 'desc')
    .execute()
  const intervals = await db
    .selectFrom('component_test_interval')
    .select(['scope', 'interval_months'])
    .where('limit_id', '=', limitId)
    .execute()
  const byScope = new Map<
    TestScope,
    { scope: TestScope; lastTestAt: Date | null; lastPassAt: Date | null; intervalMonths: number | null }
  >()
  for (const r of rows) {
    const e = byScope.get(r.scope) ?? { scope: r.scope, lastTestAt: null, lastPassAt: null, intervalMonths: null }
    e.lastTestAt ??= r.performed_at
    if (r.passed) e.lastPassAt ??= r.performed_at
    byScope.set(r.scope, e)
  }
  for (const i of intervals) {
    const e = byScope.get(i.scope) ?? { scope: i.scope, lastTestAt: null, lastPassAt: null, intervalMonths: null }
    e.intervalMonths = i.interval_months
    byScope.set(i.scope, e)
  }
  return [...byScope.values()]
}

export function listComponentIntervals(db: Db, limitId: number) {
  return db
    .selectFrom('component_test_interval')
    .select(['scope', 'interval_months'])
    .where('limit_id', '=', limitId)
    .execute()
}

export async function replaceComponentIntervals(
  trx: Transaction<Database>,
  limitId: number,
  intervals: { scope: ComponentScope; intervalMonths: number }[],
) {
  await trx.deleteFrom('component_test_interval').where('limit_id', '=', limitId).execute()
  if (intervals.length)
    await trx
      .insertInto('component_test_interval')
      .values(intervals.map((i) => ({ limit_id: limitId, scope: i.scope, interval_months: i.intervalMonths })))
      .execute()
}

export interface LimitSchedule {
  status: TestDueStatus
  dueDate: string | null
  lastFullPass: string | null
  statusChangesOn: string | null
}

export function updateLimitSchedule(db: Db, limitId: number, v: LimitSchedule) {
  return updateLimitSchedules(db, [{ limitId, ...v }])
}

/** Writes the schedules of many limits in one statement. */
export async function updateLimitSchedules(db: Db, rows: (LimitSchedule & { limitId: number })[]) {
  if (!rows.length) return
  const values = sql.join(
    rows.map(
      (r) =>
        sql`(${r.limitId}::int, ${r.status}::text, ${r.dueDate}::date, ${r.lastFullPass}::date,
          ${r.statusChangesOn}::date)`,
    ),
  )
  await sql`
    UPDATE limit_function AS l
    SET test_status = v.status, test_due_date = v.due, last_full_pass = v.last, test_status_changes_on = v.changes
    FROM (VALUES ${values}) AS v (id, status, due, last, changes)
    WHERE l.id = v.id`.execute(db)
}

/**
 * Active limits whose test status changes by the calendar on or before today in their site's zone: what the schedule
 * job refreshes. The first date condition (no zone is more than 14 h ahead of UTC) lets the partial index do the work.
 */
export function limitsWithStatusChangeDue(db: Db, now: Date, afterId: number, limit: number) {
  const utcTomorrow = new Date(now.getTime() + 86_400_000).toISOString().slice(0, 10)
  return db
    .selectFrom('limit_function')
    .innerJoin('site', 'site.id', 'limit_function.site_id')
    .select('limit_function.id')
    .where('limit_function.status', '=', 'active')
    .where('limit_function.id', '>', afterId)
    .where('limit_function.test_status_changes_on', 'is not', null)
    .where('limit_function.test_status_changes_on', '<=', utcTomorrow)
    .where(
      sql<boolean>`limit_function.test_status_changes_on <= (${now}::timestamptz AT TIME ZONE site.time_zone)::date`,
    )
    .orderBy('limit_function.id')
    .limit(limit)
    .execute()
}

/** Makes every active limit of a site due for a refresh by the schedule job (after a change of the site's policy). */
export function markSiteSchedulesStale(db: Db, siteId: number) {
  return db
    .updateTable('limit_function')
    .set({ test_status_changes_on: '2000-01-01' })
    .where('site_id', '=', siteId)
    .where('status', '=', 'active')
    .execute()
}

export interface ScheduleFilter {
  siteIds: number[]
  areaIds?: number[]
  status?: TestDueStatus[]
  limit: number
}

export async function scheduleRows(db: Db, q: ScheduleFilter) {
  let base = db
    .selectFrom('limit_function')
    .innerJoin('area', 'area.id', 'limit_function.area_id')
    .innerJoin('site', 'site.id', 'limit_function.site_id')
    .leftJoin('test_deferral', (j) =>
      j
        .onRef('test_deferral.limit_id', '=', 'limit_function.id')
        .on('test_deferral.status', '=', 'approved')
        .onRef('test_deferral.new_due_date', '=', 'limit_function.test_due_date'),
    )
    .where('limit_function.status', '=', 'active')
    .where('limit_function.site_id', 'in', idsOrNone(q.siteIds))
  if (q.areaIds?.length) base = base.where('limit_function.area_id', 'in', q.areaIds)
  if (q.status?.length) base = base.where('limit_function.test_status', 'in', q.status)
  return base
    .select([
      'limit_function.id',
      'limit_function.tag',
      'limit_function.description',
      'limit_function.site_id',
      'site.code as site_code',
      'area.name as area_name',
      'limit_function.test_status',
      'limit_function.test_due_date',
      'limit_function.last_full_pass',
      'limit_function.test_interval_months',
      'limit_function.protection_state',
      'limit_function.sil',
      'test_deferral.new_due_date as deferred_to',
    ])
    .orderBy('limit_function.test_due_date', (ob) => ob.asc().nullsFirst())
    .orderBy('limit_function.tag')
    .limit(q.limit)
    .execute()
}

export async function scheduleCounts(db: Db, siteIds: number[], areaIds?: number[]) {
  let base = db.selectFrom('limit_function').where('status', '=', 'active').where('site_id', 'in', idsOrNone(siteIds))
  if (areaIds?.length) base = base.where('area_id', 'in', areaIds)
  return base
    .select(['test_status', (eb) => eb.fn.countAll<number>().as('n')])
    .groupBy('test_status')
    .execute()
}

/** Active limits of a site whose test needs attention, for the digest. */
export function digestRows(db: Db, siteId: number, statuses: readonly TestDueStatus[]) {
  return db
    .selectFrom('limit_function')
    .innerJoin('area', 'area.id', 'limit_function.area_id')
    .select(['limit_function.tag', 'limit_function.test_status', 'limit_function.test_due_date', 'area.name as area'])
    .where('limit_function.site_id', '=', siteId)
    .where('limit_function.status', '=', 'active')
    .where('limit_function.test_status', 'in', [...statuses])
    .orderBy('limit_function.test_due_date', (ob) => ob.asc().nullsFirst())
    .execute()
}

/** Records that a digest was sent for a period; false when it already was. */
export async function claimDigest(trx: Transaction<Database>, siteId: number, period: string, at: Date) {
  const inserted = await trx
    .insertInto('digest_log')
    .values({ site_id: siteId, kind: 'trip_tests', period, sent_at: at })
    .onConflict((oc) => oc.doNothing())
    .returning('site_id')
    .executeTakeFirst()
  return inserted !== undefined
}

// ---- degraded limits

export function lockOpenDegradation(trx: Transaction<Database>, limitId: number) {
  return trx
    .selectFrom('limit_degradation')
    .selectAll()
    .where('limit_id', '=', limitId)
    .where('cleared_at', 'is', null)
    .forUpdate()
    .executeTakeFirst()
}

export function insertDegradation(trx: Transaction<Database>, values: Insertable<LimitDegradationTable>) {
  return trx.insertInto('limit_degradation').values(values).execute()
}

export function updateDegradation(trx: Transaction<Database>, id: number, values: Updateable<LimitDegradationTable>) {
  return trx.updateTable('limit_degradation').set(values).where('id', '=', id).execute()
}

export function listDegradations(db: Db, limitId: number) {
  return db
    .selectFrom('limit_degradation')
    .leftJoin('app_user as signer', 'signer.id', 'limit_degradation.measures_signed_by')
    .leftJoin('app_user as approver', 'approver.id', 'limit_degradation.deadline_approved_by')
    .selectAll('limit_degradation')
    .select(['signer.display_name as signer_name', 'approver.display_name as approver_name'])
    .where('limit_id', '=', limitId)
    .orderBy('opened_at', 'desc')
    .execute()
}

/** Open degradations whose repair deadline has passed and that nobody has escalated yet, with their site. */
export function unescalatedDeadlines(db: Db) {
  return db
    .selectFrom('limit_degradation')
    .innerJoin('limit_function', 'limit_function.id', 'limit_degradation.limit_id')
    .innerJoin('site', 'site.id', 'limit_function.site_id')
    .select([
      'limit_degradation.id',
      'limit_degradation.limit_id',
      'limit_degradation.repair_deadline',
      'limit_function.tag',
      'limit_function.site_id',
      'site.time_zone',
    ])
    .where('limit_degradation.cleared_at', 'is', null)
    .where('limit_degradation.repair_deadline', 'is not', null)
    .where('limit_degradation.escalated_at', 'is', null)
    .execute()
}

/** The time zones of some sites (each site's "today" is its own calendar day). */
export function siteZones(db: Db, siteIds: number[]) {
  return db.selectFrom('site').select(['id', 'time_zone']).where('id', 'in', idsOrNone(siteIds)).orderBy('id').execute()
}

/** Open degradations of some sites whose repair deadline has passed (for home and handover). */
export function passedRepairDeadlines(db: Db, siteIds: number[], today: string) {
  return db
    .selectFrom('limit_degradation')
    .innerJoin('limit_function', 'limit_function.id', 'limit_degradation.limit_id')
    .select([
      'limit_degradation.id',
      'limit_degradation.limit_id',
      'limit_degradation.repair_deadline',
      'limit_degradation.escalated_at',
      'limit_function.tag',
      'limit_function.site_id',
      'limit_function.area_id',
    ])
    .where('limit_function.site_id', 'in', idsOrNone(siteIds))
    .where('limit_degradation.cleared_at', 'is', null)
    .where('limit_degradation.repair_deadline', '<', today)
    .orderBy('limit_degradation.repair_deadline')
    .execute()
}

// ---- test deferrals

export function insertDeferral(trx: Transaction<Database>, values: Insertable<TestDeferralTable>) {
  return trx.insertInto('test_deferral').values(values).returning('id').executeTakeFirstOrThrow()
}

export function lockDeferral(trx: Transaction<Database>, id: number) {
  return trx.selectFrom('test_deferral').selectAll().where('id', '=', id).forUpdate().executeTakeFirst()
}

export function updateDeferral(trx: Transaction<Database>, id: number, values: Updateable<TestDeferralTable>) {
  return trx.updateTable('test_deferral').set(values).where('id', '=', id).execute()
}

/** The approved deferrals of a limit, newest first: the due-date computation applies the one that fits. */
/** The approved deferrals of many limits, the newest decision first. */
export function approvedDeferralsOf(db: Db, limitIds: number[]) {
  if (!limitIds.length) return Promise.resolve([])
  return db
    .selectFrom('test_deferral')
    .select(['id', 'limit_id', 'original_due_date', 'new_due_date'])
    .where('limit_id', 'in', limitIds)
    .where('status', '=', 'approved')
    .orderBy('decided_at', 'desc')
    .execute()
}

/** Requested deferrals of a limit (at most one by the unique index). */
export function requestedDeferrals(db: Db, limitId: number) {
  return db
    .selectFrom('test_deferral')
    .select(['id'])
    .where('limit_id', '=', limitId)
    .where('status', '=', 'requested')
    .execute()
}

function deferralBase(db: Db) {
  return db
    .selectFrom('test_deferral')
    .innerJoin('limit_function', 'limit_function.id', 'test_deferral.limit_id')
    .innerJoin('app_user as requester', 'requester.id', 'test_deferral.requested_by')
    .leftJoin('app_user as decider', 'decider.id', 'test_deferral.decided_by')
}

const DEFERRAL_COLUMNS = [
  'limit_function.tag',
  'limit_function.sil',
  'limit_function.test_due_date',
  'requester.display_name as requester_name',
  'decider.display_name as decider_name',
] as const

export function findDeferral(db: Db, id: number) {
  return deferralBase(db)
    .selectAll('test_deferral')
    .select([...DEFERRAL_COLUMNS])
    .where('test_deferral.id', '=', id)
    .executeTakeFirst()
}

export interface DeferralListFilter {
  siteIds: number[]
  limitId?: number
  status?: DeferralStatus[]
  page: number
  pageSize: number
}

export function listDeferrals(db: Db, q: DeferralListFilter) {
  let base = deferralBase(db).where('test_deferral.site_id', 'in', idsOrNone(q.siteIds))
  if (q.limitId) base = base.where('test_deferral.limit_id', '=', q.limitId)
  if (q.status?.length) base = base.where('test_deferral.status', 'in', q.status)
  return pageWithTotal(base, q, (b) =>
    b
      .selectAll('test_deferral')
      .select([...DEFERRAL_COLUMNS])
      .orderBy('test_deferral.requested_at', 'desc')
      .orderBy('test_deferral.id', 'desc'),
  )
}

/** Deferrals requested or decided in a period at some sites, for the review figures and the handover. */
export function deferralsBetween(db: Db, siteIds: number[], from: Date, to: Date) {
  return db
    .selectFrom('test_deferral')
    .innerJoin('limit_function', 'limit_function.id', 'test_deferral.limit_id')
    .select([
      'test_deferral.id',
      'test_deferral.limit_id',
      'test_deferral.status',
      'test_deferral.original_due_date',
      'test_deferral.new_due_date',
      'test_deferral.requested_at',
      'limit_function.tag',
      'limit_function.area_id',
      'limit_function.test_due_date',
    ])
    .where('test_deferral.site_id', 'in', idsOrNone(siteIds))
    .where('test_deferral.requested_at', '<', to)
    .where((eb) => eb.or([eb('test_deferral.requested_at', '>=', from), eb('test_deferral.status', '=', 'requested')]))
    .execute()
}

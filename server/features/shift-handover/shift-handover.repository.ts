import { OVERDUE_TEST_STATUSES } from '../../../shared/domain/rules/trip-tests.ts'
import type { ExpressionBuilder, Kysely, Transaction } from 'kysely'
import type { Database } from '../../db/schema.ts'
import {
  expiredUnreverted,
  implementedReversal,
  itemsOfRequest,
} from '../change-requests/change-requests.repository.ts'

// Every query of the shift handover (docs/shift-handover.md).

type Q = Kysely<Database> | Transaction<Database>

/** Areas by id with their site. */
export function findAreas(db: Q, areaIds: number[]) {
  return db
    .selectFrom('area')
    .innerJoin('site', 'site.id', 'area.site_id')
    .select(['area.id', 'area.name', 'area.site_id', 'site.name as site_name', 'site.time_zone'])
    .where('area.id', 'in', areaIds)
    .orderBy('area.name')
    .orderBy('area.id')
    .execute()
}

/** Bypasses of the areas that are in force or on their way (requested, authorized), by planned end. */
export function findOpenBypassIds(db: Q, areaIds: number[]) {
  return db
    .selectFrom('bypass')
    .innerJoin('limit_function', 'limit_function.id', 'bypass.limit_id')
    .select(['bypass.id', 'limit_function.area_id'])
    .where('limit_function.area_id', 'in', areaIds)
    .where('bypass.status', 'in', ['active', 'authorized', 'requested'])
    .orderBy('bypass.planned_end')
    .orderBy('bypass.id')
    .execute()
}

/** Alarm states in force at the site, with the area of their limit (none for a tag the register does not hold). */
export function findActiveAlarmStates(db: Q, siteId: number) {
  return db
    .selectFrom('alarm_state')
    .innerJoin('app_user', 'app_user.id', 'alarm_state.started_by')
    .leftJoin('limit_function', 'limit_function.id', 'alarm_state.limit_id')
    .select([
      'alarm_state.id',
      'alarm_state.tag',
      'alarm_state.kind',
      'alarm_state.reason',
      'alarm_state.until',
      'alarm_state.signature_id',
      'limit_function.area_id',
      'app_user.display_name',
    ])
    .where('alarm_state.site_id', '=', siteId)
    .where('alarm_state.status', '=', 'active')
    .orderBy('alarm_state.until')
    .orderBy('alarm_state.id')
    .execute()
}

/** Limits of the areas degraded by a failed test, not yet cleared. */
export function findDegraded(db: Q, areaIds: number[]) {
  return db
    .selectFrom('limit_degradation')
    .innerJoin('limit_function', 'limit_function.id', 'limit_degradation.limit_id')
    .leftJoin('app_user', 'app_user.id', 'limit_degradation.measures_signed_by')
    .select([
      'limit_function.id as limitId',
      'limit_function.tag',
      'limit_function.area_id',
      'limit_degradation.opened_at',
      'limit_degradation.reasons',
      'limit_degradation.compensating_measures',
      'limit_degradation.repair_deadline',
      'app_user.display_name',
    ])
    .where('limit_function.area_id', 'in', areaIds)
    .where('limit_degradation.cleared_at', 'is', null)
    .orderBy('limit_degradation.opened_at')
    .orderBy('limit_function.id')
    .execute()
}

/** Limits in service of the areas whose trip test is overdue or that never passed one. */
export function findOverdueTests(db: Q, areaIds: number[]) {
  return db
    .selectFrom('limit_function')
    .select(['id', 'tag', 'area_id', 'test_status', 'test_due_date', 'sil'])
    .where('area_id', 'in', areaIds)
    .where('status', '=', 'active')
    .where('test_status', 'in', [...OVERDUE_TEST_STATUSES])
    .orderBy('test_due_date')
    .orderBy('tag')
    .execute()
}

/**
 * Temporary changes with an item on a limit of the area: approved or in force and not yet expired, and those
 * expired and not reverted ("expired, to be reverted", docs/change-requests.md#expired-temporary-changes).
 */
export function findOpenTemporaryChanges(db: Q, siteId: number, areaId: number, now: Date) {
  return (
    db
      .selectFrom('change_request')
      .select(['id', 'title', 'status', 'expires_at', (eb) => expiredUnreverted(eb, now).as('expired_to_revert')])
      .where('site_id', '=', siteId)
      .where('type', '=', 'temporary')
      .where('status', 'in', ['approved', 'implemented', 'closed'])
      // not yet reverted, and either before its end or on the device past it
      .where((eb) => eb.not(eb.exists(implementedReversal(eb))))
      .where((eb) => eb.or([eb('expires_at', '>', now), eb('status', 'in', ['implemented', 'closed'])]))
      .where((eb) =>
        eb.exists(
          itemsOfRequest(eb)
            .innerJoin('limit_function', 'limit_function.id', 'change_request_item.limit_id')
            .select('change_request_item.id')
            .where('limit_function.area_id', '=', areaId),
        ),
      )
      .orderBy('expires_at')
      .orderBy('id')
      .execute()
  )
}

export async function insertHandover(
  trx: Transaction<Database>,
  h: {
    siteId: number
    areaIds: number[]
    notes: string
    snapshot: unknown
    stateHash: string
    contentHash: string
    by: number
    at: Date
  },
) {
  const { id } = await trx
    .insertInto('shift_handover')
    .values({
      site_id: h.siteId,
      notes: h.notes,
      snapshot: JSON.stringify(h.snapshot),
      state_hash: h.stateHash,
      content_hash: h.contentHash,
      handed_over_by: h.by,
      handed_over_at: h.at,
    })
    .returning('id')
    .executeTakeFirstOrThrow()
  await trx
    .insertInto('shift_handover_area')
    .values(h.areaIds.map((a) => ({ handover_id: id, area_id: a })))
    .execute()
  return id
}

/** The handover covers any of the areas. */
const coversAnyArea = (eb: ExpressionBuilder<Database, 'shift_handover'>, areaIds: number[]) =>
  eb.exists(
    eb
      .selectFrom('shift_handover_area')
      .select('shift_handover_area.area_id')
      .whereRef('shift_handover_area.handover_id', '=', 'shift_handover.id')
      .where('shift_handover_area.area_id', 'in', areaIds),
  )

/** Handovers still waiting for acceptance that cover any of the areas are replaced by a newer one. */
export async function supersedePending(trx: Transaction<Database>, areaIds: number[], exceptId: number) {
  const res = await trx
    .updateTable('shift_handover')
    .set({ status: 'superseded' })
    .where('status', '=', 'handed_over')
    .where('id', '!=', exceptId)
    .where((eb) => coversAnyArea(eb, areaIds))
    .executeTakeFirst()
  return Number(res.numUpdatedRows)
}

export function lockHandover(trx: Transaction<Database>, id: number) {
  return trx.selectFrom('shift_handover').selectAll().where('id', '=', id).forUpdate().executeTakeFirst()
}

export async function markAccepted(trx: Transaction<Database>, id: number, by: number, at: Date) {
  await trx
    .updateTable('shift_handover')
    .set({ status: 'accepted', accepted_by: by, accepted_at: at })
    .where('id', '=', id)
    .execute()
}

/** Handover rows with the names of both supervisors and their areas. */
export async function selectHandovers(db: Q, ids: number[]) {
  if (!ids.length) return []
  const rows = await db
    .selectFrom('shift_handover')
    .innerJoin('app_user as out', 'out.id', 'shift_handover.handed_over_by')
    .leftJoin('app_user as inc', 'inc.id', 'shift_handover.accepted_by')
    .selectAll('shift_handover')
    .select(['out.display_name as handed_over_name', 'inc.display_name as accepted_name'])
    .where('shift_handover.id', 'in', ids)
    .execute()
  const areas = await db
    .selectFrom('shift_handover_area')
    .select(['handover_id', 'area_id'])
    .where('handover_id', 'in', ids)
    .orderBy('area_id')
    .execute()
  return rows.map((r) => ({ ...r, area_ids: areas.filter((a) => a.handover_id === r.id).map((a) => a.area_id) }))
}

/** Ids of the handovers covering any of the areas, newest first. */
export async function findHandoverIds(db: Q, areaIds: number[], opts: { status?: 'handed_over'; limit: number }) {
  let q = db
    .selectFrom('shift_handover')
    .select('shift_handover.id')
    .where((eb) => coversAnyArea(eb, areaIds))
  if (opts.status) q = q.where('shift_handover.status', '=', opts.status)
  const rows = await q
    .orderBy('shift_handover.handed_over_at', 'desc')
    .orderBy('shift_handover.id', 'desc')
    .limit(opts.limit)
    .execute()
  return rows.map((r) => r.id)
}

import { type ExpressionBuilder, sql, type Transaction, type Updateable } from 'kysely'
import type {
  ChangeItemKind,
  ChangeListQuery,
  ChangeStatus,
  ChecklistItem,
  ItemReadBack,
  ItemWindow,
  ReadBackExpected,
} from '../../../shared/schemas/change-requests.ts'
import type { Db } from '../../db/index.ts'
import type { ChangeRequestTable, Database, InstrumentTable } from '../../db/schema.ts'
import { pageWithTotal } from '../../db/paging.ts'
import type { Instrument } from '../../../shared/schemas/register.ts'
import type { ChangeWaitingSites } from '../../../shared/domain/rules/change-requests.ts'
import { likeEscape } from '../../authorize.ts'
import { idsOrNone } from '../../db/ids.ts'

/** Every query of management of change (docs/change-requests.md). Functions take `db` or a transaction first. */
type Q = Db | Transaction<Database>
type Trx = Transaction<Database>
export const CHANGE_ENTITY = 'ChangeRequest'

// ---------- the request ----------

export async function findRequest(db: Q, id: number, lock = false) {
  let q = db.selectFrom('change_request').selectAll().where('id', '=', id)
  if (lock) q = q.forUpdate()
  return q.executeTakeFirst()
}
export type ChangeRequestRow = NonNullable<Awaited<ReturnType<typeof findRequest>>>

export async function insertRequest(
  trx: Trx,
  v: {
    siteId: number
    type: ChangeRequestRow['type']
    title: string
    rationale: string
    hazardReference: string
    expiresAt: Date | null
    proposerId: number
    importBatchId: number | null
    reversesId?: number | null
    now: Date
  },
): Promise<number> {
  const { id } = await trx
    .insertInto('change_request')
    .values({
      site_id: v.siteId,
      type: v.type,
      title: v.title,
      rationale: v.rationale,
      hazard_reference: v.hazardReference,
      expires_at: v.expiresAt,
      proposer_id: v.proposerId,
      content_hash: '0'.repeat(64),
      approvals_required: 1,
      import_batch_id: v.importBatchId,
      reverses_id: v.reversesId ?? null,
      created_at: v.now,
      updated_at: v.now,
    })
    .returning('id')
    .executeTakeFirstOrThrow()
  return id
}

export async function updateRequest(trx: Trx, id: number, set: Updateable<ChangeRequestTable>) {
  await trx.updateTable('change_request').set(set).where('id', '=', id).execute()
}

/** Sets columns only while `where` still holds (a job's claim); true when the row was changed. */
export async function claimRequest(
  trx: Trx,
  id: number,
  set: Updateable<ChangeRequestTable>,
  where:
    | { column: 'revert_reminder_at' | 'emergency_flagged_at'; isNull: true }
    | { status: ChangeStatus }
    | { noticeBefore: Date },
): Promise<boolean> {
  let q = trx.updateTable('change_request').set(set).where('id', '=', id)
  if ('status' in where) q = q.where('status', '=', where.status)
  else if ('noticeBefore' in where) {
    const before = where.noticeBefore
    q = q.where((eb) => eb.or([eb('expired_notice_at', 'is', null), eb('expired_notice_at', '<=', before)]))
  } else q = q.where(where.column, 'is', null)
  return Number((await q.executeTakeFirst()).numUpdatedRows) > 0
}

export async function siteOf(db: Q, siteId: number) {
  return db
    .selectFrom('site')
    .select(['code', 'policy', 'time_zone'])
    .where('id', '=', siteId)
    .executeTakeFirstOrThrow()
}

// ---------- temporary changes and their reversals ----------

/** The requests reversing a temporary change. */
export async function reversalsOf(db: Q, id: number) {
  return db
    .selectFrom('change_request')
    .select(['id', 'status', 'title'])
    .where('reverses_id', '=', id)
    .orderBy('id')
    .execute()
}

/** The items of the request the outer query reads (`change_request`), for EXISTS and counts. */
export function itemsOfRequest(eb: ExpressionBuilder<Database, 'change_request'>) {
  return eb
    .selectFrom('change_request_item')
    .whereRef('change_request_item.change_request_id', '=', 'change_request.id')
}

/** The signatures given on the request the outer query reads (`change_request`). */
function signaturesOfRequest(eb: ExpressionBuilder<Database, 'change_request'>) {
  return eb
    .selectFrom('signature')
    .where('signature.entity_type', '=', CHANGE_ENTITY)
    .whereRef('signature.entity_id', '=', 'change_request.id')
}

/** The implemented or closed requests reversing a change (none: the temporary change is not reverted). */
export function implementedReversal(eb: ExpressionBuilder<Database, 'change_request'>) {
  return eb
    .selectFrom('change_request as reversal')
    .select('reversal.id')
    .whereRef('reversal.reverses_id', '=', 'change_request.id')
    .where('reversal.status', 'in', ['implemented', 'closed'])
}

/**
 * "Expired, to be reverted" in SQL, the same test as `temporaryState` of the rule book: a temporary change on the
 * device (implemented or closed) past its end, with no implemented or closed reversal.
 */
export function expiredUnreverted(eb: ExpressionBuilder<Database, 'change_request'>, now: Date) {
  return eb.and([
    eb('change_request.type', '=', 'temporary'),
    eb('change_request.status', 'in', ['implemented', 'closed']),
    eb('change_request.expires_at', '<=', now),
    eb.not(eb.exists(implementedReversal(eb))),
  ])
}

// ---------- editors ----------

export async function editorIdsOf(db: Q, id: number): Promise<number[]> {
  return (
    await db.selectFrom('change_request_editor').select('user_id').where('change_request_id', '=', id).execute()
  ).map((r) => r.user_id)
}

export async function addEditor(trx: Trx, id: number, userId: number) {
  await trx
    .insertInto('change_request_editor')
    .values({ change_request_id: id, user_id: userId })
    .onConflict((oc) => oc.doNothing())
    .execute()
}

// ---------- items ----------

export async function replaceItems(
  trx: Trx,
  crId: number,
  items: {
    kind: ChangeItemKind
    limit_id: number | null
    instrument_id: number | null
    changes: unknown
    base_revision: number
    window_before: ItemWindow | null
    window_after: ItemWindow | null
    read_back_expected: ReadBackExpected | null
  }[],
) {
  await trx.deleteFrom('change_request_item').where('change_request_id', '=', crId).execute()
  if (!items.length) return
  await trx
    .insertInto('change_request_item')
    .values(
      items.map((p, position) => ({
        change_request_id: crId,
        position,
        kind: p.kind,
        limit_id: p.limit_id,
        instrument_id: p.instrument_id,
        changes: JSON.stringify(p.changes),
        base_revision: p.base_revision,
        window_before: JSON.stringify(p.window_before),
        window_after: JSON.stringify(p.window_after),
        read_back_expected: p.read_back_expected ? JSON.stringify(p.read_back_expected) : null,
      })),
    )
    .execute()
}

export async function itemsOf(db: Q, crId: number) {
  return db
    .selectFrom('change_request_item')
    .selectAll()
    .where('change_request_id', '=', crId)
    .orderBy('position')
    .execute()
}

export async function markItemImplemented(trx: Trx, itemId: number, by: number, at: Date, readBack: ItemReadBack) {
  await trx
    .updateTable('change_request_item')
    .set({ implemented_at: at, implemented_by: by, read_back: JSON.stringify(readBack) })
    .where('id', '=', itemId)
    .execute()
}

/** The items with the tag, unit, revision and SIL of what they change, and who implemented them. */
export async function itemsWithTargets(db: Q, crId: number) {
  return db
    .selectFrom('change_request_item')
    .leftJoin('limit_function', 'limit_function.id', 'change_request_item.limit_id')
    .leftJoin('instrument as li', 'li.id', 'limit_function.primary_instrument_id')
    .leftJoin('instrument', 'instrument.id', 'change_request_item.instrument_id')
    .leftJoin('app_user', 'app_user.id', 'change_request_item.implemented_by')
    .selectAll('change_request_item')
    .select([
      'limit_function.tag as limit_tag',
      'limit_function.revision as limit_revision',
      'limit_function.sil as limit_sil',
      'limit_function.primary_instrument_id as limit_instrument_id',
      'li.unit as limit_unit',
      'instrument.tag as instrument_tag',
      'instrument.revision as instrument_revision',
      'instrument.unit as instrument_unit',
      'app_user.display_name as implementer',
    ])
    .where('change_request_id', '=', crId)
    .orderBy('position')
    .execute()
}

/** Whether any item touches a SIL-rated function, before or after the change. */
export async function touchesSilFunction(trx: Trx, crId: number): Promise<boolean> {
  const items = await trx
    .selectFrom('change_request_item')
    .leftJoin('limit_function', 'limit_function.id', 'change_request_item.limit_id')
    .select([
      'change_request_item.kind',
      'change_request_item.instrument_id',
      'change_request_item.changes',
      'limit_function.sil',
    ])
    .where('change_request_id', '=', crId)
    .execute()
  // SIL-rated before or after the change: a modify that gives a limit a SIL is a change to a SIL-rated function
  if (items.some((i) => i.sil !== null || (i.changes.sil?.to ?? null) !== null)) return true
  const instrumentIds = items.filter((i) => i.instrument_id).map((i) => i.instrument_id!)
  if (!instrumentIds.length) return false
  return Boolean(
    await trx
      .selectFrom('limit_function')
      .select('id')
      .where('primary_instrument_id', 'in', instrumentIds)
      .where('sil', 'is not', null)
      .executeTakeFirst(),
  )
}

/** The limits in use on an instrument, with their operating-window findings. */
export async function limitsOnInstrument(db: Q, instrumentId: number) {
  return db
    .selectFrom('limit_function')
    .select(['id', 'tag', 'window_errors', 'window_warnings', 'sil'])
    .where('primary_instrument_id', '=', instrumentId)
    .where('status', '!=', 'retired')
    .execute()
}

/**
 * Runs `apply` inside a savepoint of the transaction that is always rolled back, and returns what it read: the
 * window after an instrument change, without a transaction of its own (the row is locked by this one).
 */
export async function withRolledBackSavepoint<T>(trx: Trx, apply: () => Promise<T>): Promise<T> {
  await sql`SAVEPOINT change_preview`.execute(trx)
  try {
    return await apply()
  } finally {
    await sql`ROLLBACK TO SAVEPOINT change_preview`.execute(trx)
    await sql`RELEASE SAVEPOINT change_preview`.execute(trx)
  }
}

/** Writes an instrument's range, normal range, design limits and burnout (inside a rolled-back preview only). */
export async function setInstrumentRanges(
  trx: Trx,
  id: number,
  d: {
    rangeLow?: string | number
    rangeHigh?: string | number
    normalLow?: string | number | null
    normalHigh?: string | number | null
    designLow?: string | number | null
    designHigh?: string | number | null
    burnout?: Instrument['burnout']
  },
) {
  const set: Updateable<InstrumentTable> = {
    ...(d.rangeLow !== undefined ? { range_low: d.rangeLow } : {}),
    ...(d.rangeHigh !== undefined ? { range_high: d.rangeHigh } : {}),
    ...(d.normalLow !== undefined ? { normal_low: d.normalLow } : {}),
    ...(d.normalHigh !== undefined ? { normal_high: d.normalHigh } : {}),
    ...(d.designLow !== undefined ? { design_low: d.designLow } : {}),
    ...(d.designHigh !== undefined ? { design_high: d.designHigh } : {}),
    ...(d.burnout !== undefined ? { burnout: d.burnout } : {}),
  }
  // an item that changes only texts (a device description) changes no range: nothing to set
  if (!Object.keys(set).length) return
  await trx.updateTable('instrument').set(set).where('id', '=', id).execute()
}

/** Locks the limit or instrument of an item and returns its tag and revision. */
export async function lockTargetRevision(
  trx: Trx,
  item: { kind: string; limit_id: number | null; instrument_id: number | null },
) {
  return item.kind === 'instrument'
    ? trx
        .selectFrom('instrument')
        .select(['tag', 'revision'])
        .where('id', '=', item.instrument_id!)
        .forUpdate()
        .executeTakeFirstOrThrow()
    : trx
        .selectFrom('limit_function')
        .select(['tag', 'revision'])
        .where('id', '=', item.limit_id!)
        .forUpdate()
        .executeTakeFirstOrThrow()
}

// ---------- checklist ----------

export async function checksOf(db: Q, crId: number) {
  return db
    .selectFrom('change_request_check')
    .leftJoin('app_user', 'app_user.id', 'change_request_check.done_by')
    .select(['item', 'done_at', 'note', 'not_applicable', 'app_user.display_name'])
    .where('change_request_id', '=', crId)
    .execute()
}

export async function setCheck(
  trx: Trx,
  crId: number,
  item: ChecklistItem,
  v: { by: number; at: Date; note: string; notApplicable: boolean },
) {
  const set = { done_by: v.by, done_at: v.at, note: v.note, not_applicable: v.notApplicable }
  await trx
    .insertInto('change_request_check')
    .values({ change_request_id: crId, item, ...set })
    .onConflict((oc) => oc.columns(['change_request_id', 'item']).doUpdateSet(set))
    .execute()
}

export async function clearCheck(trx: Trx, crId: number, item: ChecklistItem) {
  await trx.deleteFrom('change_request_check').where('change_request_id', '=', crId).where('item', '=', item).execute()
}

// ---------- signatures of the request ----------

/** The approvals of a request that stand (not voided). */
function approvalsOf(trx: Trx, crId: number) {
  return trx
    .selectFrom('signature')
    .where('signature.entity_type', '=', CHANGE_ENTITY)
    .where('signature.entity_id', '=', crId)
    .where('signature.meaning', '=', 'approved')
    .where('signature.voided_at', 'is', null)
}

export async function countApprovals(trx: Trx, crId: number): Promise<number> {
  const r = await approvalsOf(trx, crId)
    .select((eb) => eb.fn.countAll<number>().as('n'))
    .executeTakeFirstOrThrow()
  return Number(r.n)
}

export async function approverContacts(trx: Trx, crId: number) {
  return approvalsOf(trx, crId)
    .innerJoin('app_user', 'app_user.id', 'signature.user_id')
    .select('app_user.email')
    .execute()
}

// ---------- lists ----------

export interface Waiter {
  id: number
  roles: { siteId: number; role: string }[]
}

type CrEb = ExpressionBuilder<Database, 'change_request'>

/** What waits for this person: to approve, to implement, to implement first (emergency), to close. */
function waitingFor(eb: CrEb, sites: ChangeWaitingSites, userId: number) {
  const inSites = (ids: number[]) => eb('change_request.site_id', 'in', idsOrNone(ids))
  return eb.or([
    eb.and([
      inSites(sites.approve),
      eb('change_request.status', 'in', ['submitted', 'implemented']),
      eb('change_request.approved_at', 'is', null),
      eb('change_request.proposer_id', '!=', userId),
      eb.not(
        eb.exists(
          eb
            .selectFrom('change_request_editor')
            .select('user_id')
            .whereRef('change_request_editor.change_request_id', '=', 'change_request.id')
            .where('user_id', '=', userId),
        ),
      ),
      eb.not(
        eb.exists(
          signaturesOfRequest(eb)
            .select('signature.id')
            .where('signature.user_id', '=', userId)
            .where('signature.meaning', 'in', ['approved', 'implemented'])
            .where('signature.voided_at', 'is', null),
        ),
      ),
    ]),
    eb.and([inSites(sites.implement), eb('change_request.status', '=', 'approved')]),
    eb.and([
      inSites(sites.emergency),
      eb('change_request.status', '=', 'submitted'),
      eb('change_request.type', '=', 'emergency'),
    ]),
    // implemented and approved: waiting for the engineer's close-out
    eb.and([
      inSites(sites.close),
      eb('change_request.status', '=', 'implemented'),
      eb('change_request.approved_at', 'is not', null),
    ]),
  ])
}

export function listRequests(
  db: Q,
  q: Omit<ChangeListQuery, 'siteId'> & { siteIds: number[]; userId: number; waiting: ChangeWaitingSites; now: Date },
) {
  let query = db
    .selectFrom('change_request')
    .innerJoin('app_user', 'app_user.id', 'change_request.proposer_id')
    .innerJoin('site', 'site.id', 'change_request.site_id')
    .where('change_request.site_id', 'in', idsOrNone(q.siteIds))
  if (q.status?.length) query = query.where('change_request.status', 'in', q.status)
  if (q.type?.length) query = query.where('change_request.type', 'in', q.type)
  if (q.q) query = query.where('change_request.title', 'ilike', `%${likeEscape(q.q)}%`)
  if (q.limitId !== undefined) {
    const limitId = q.limitId
    query = query.where((eb) =>
      eb.exists(
        itemsOfRequest(eb)
          .select('change_request_item.id')
          .where((w) =>
            w.or([
              w('change_request_item.limit_id', '=', limitId),
              // a change of an instrument the limit reads is part of the limit's history too
              w(
                'change_request_item.instrument_id',
                'in',
                w
                  .selectFrom('limit_instrument')
                  .select('limit_instrument.instrument_id')
                  .where('limit_instrument.limit_id', '=', limitId),
              ),
            ]),
          ),
      ),
    )
  }
  if (q.expiredTemporary !== undefined) {
    const now = q.now
    query = query.where((eb) => (q.expiredTemporary ? expiredUnreverted(eb, now) : eb.not(expiredUnreverted(eb, now))))
  }
  if (q.view === 'mine') query = query.where('change_request.proposer_id', '=', q.userId)
  if (q.view === 'waiting') query = query.where((eb) => waitingFor(eb, q.waiting, q.userId))
  return pageWithTotal(query, q, (filtered) =>
    filtered
      .select([
        'change_request.id',
        'change_request.title',
        'change_request.type',
        'change_request.status',
        'change_request.site_id',
        'site.code as site_code',
        'change_request.approvals_required',
        'change_request.updated_at',
        'change_request.created_at',
        'change_request.implemented_at',
        'change_request.expires_at',
        'change_request.emergency_flagged_at',
        'app_user.display_name as proposer_name',
        (eb) => expiredUnreverted(eb, q.now).as('expired_to_revert'),
        (eb) =>
          itemsOfRequest(eb)
            .select((e) => e.fn.countAll<number>().as('n'))
            .as('item_count'),
        (eb) =>
          signaturesOfRequest(eb)
            .select((e) => e.fn.countAll<number>().as('n'))
            .where('signature.meaning', '=', 'approved')
            .where('signature.voided_at', 'is', null)
            .as('approvals_held'),
      ])
      .orderBy('change_request.updated_at', 'desc')
      .orderBy('change_request.id', 'desc'),
  )
}

export async function countWaitingRequests(db: Q, siteIds: number[], userId: number, waiting: ChangeWaitingSites) {
  const r = await db
    .selectFrom('change_request')
    .where('change_request.site_id', 'in', idsOrNone(siteIds))
    .where((eb) => waitingFor(eb, waiting, userId))
    .select((eb) => eb.fn.countAll<number>().as('n'))
    .executeTakeFirstOrThrow()
  return Number(r.n)
}

// ---------- the deadlines job ----------

/** Temporary changes in force or approved that expire within `horizon` and were not reminded yet. */
export async function temporaryChangesDue(db: Q, horizon: Date) {
  return db
    .selectFrom('change_request')
    .innerJoin('app_user', 'app_user.id', 'change_request.proposer_id')
    .select(['change_request.id', 'change_request.title', 'change_request.expires_at', 'app_user.email'])
    .where('type', '=', 'temporary')
    .where('status', 'in', ['approved', 'implemented', 'closed'])
    .where('revert_reminder_at', 'is', null)
    .where('expires_at', '<=', horizon)
    .execute()
}

/**
 * Temporary changes expired and not reverted whose last notice is older than `noticeBefore` (or never sent), with
 * the proposer's address.
 */
export async function expiredTemporaryChanges(db: Q, now: Date, noticeBefore: Date) {
  return db
    .selectFrom('change_request')
    .innerJoin('app_user', 'app_user.id', 'change_request.proposer_id')
    .select([
      'change_request.id',
      'change_request.title',
      'change_request.site_id',
      'change_request.expires_at',
      'app_user.email',
    ])
    .where((eb) => expiredUnreverted(eb, now))
    .where((eb) =>
      eb.or([
        eb('change_request.expired_notice_at', 'is', null),
        eb('change_request.expired_notice_at', '<=', noticeBefore),
      ]),
    )
    .orderBy('change_request.id')
    .execute()
}

/** Emergency changes implemented before `before` and still unapproved, not flagged yet. */
export async function unapprovedEmergencies(db: Q, before: Date) {
  return db
    .selectFrom('change_request')
    .select(['id', 'title', 'site_id'])
    .where('type', '=', 'emergency')
    .where('approved_at', 'is', null)
    .where('emergency_flagged_at', 'is', null)
    .where('implemented_at', '<=', before)
    .where('status', '=', 'implemented')
    .execute()
}

/** Approved requests with no item on the device yet (their approval may expire). */
export async function approvedNotStarted(db: Q) {
  return (
    db
      .selectFrom('change_request')
      .innerJoin('site', 'site.id', 'change_request.site_id')
      .innerJoin('app_user', 'app_user.id', 'change_request.proposer_id')
      .select([
        'change_request.id',
        'change_request.title',
        'change_request.approved_at',
        'site.policy',
        'app_user.email',
      ])
      .where('change_request.status', '=', 'approved')
      // a request with items already on the device stays approved: its remaining items must still be implemented
      .where((eb) =>
        eb.not(
          eb.exists(
            itemsOfRequest(eb)
              .select('change_request_item.id')
              .where('change_request_item.implemented_at', 'is not', null),
          ),
        ),
      )
      .execute()
  )
}

import type { Transaction } from 'kysely'
import type { ChangeProposalListQuery } from '../../../shared/schemas/change-proposals.ts'
import type { Db } from '../../db/index.ts'
import type { Database } from '../../db/schema.ts'
import { pageWithTotal } from '../../db/paging.ts'
import { idsOrNone } from '../../db/ids.ts'

/** Every query of change proposals (docs/change-requests.md#change-proposals). */
type Q = Db | Transaction<Database>
type Trx = Transaction<Database>

function base(db: Q) {
  return db
    .selectFrom('change_proposal as p')
    .innerJoin('site', 'site.id', 'p.site_id')
    .innerJoin('app_user as proposer', 'proposer.id', 'p.proposer_id')
    .leftJoin('app_user as decider', 'decider.id', 'p.decided_by')
    .leftJoin('limit_function', 'limit_function.id', 'p.limit_id')
}

const COLUMNS = [
  'p.id',
  'p.site_id',
  'site.code as site_code',
  'p.limit_id',
  'limit_function.tag as limit_tag',
  'p.title',
  'p.reason',
  'p.status',
  'p.proposer_id',
  'proposer.display_name as proposer_name',
  'p.created_at',
  'decider.display_name as decided_by_name',
  'p.decided_at',
  'p.decline_reason',
  'p.change_request_id',
] as const

export async function findProposal(db: Q, id: number, lock = false) {
  let q = base(db).select(COLUMNS).where('p.id', '=', id)
  if (lock) q = q.forUpdate('p')
  return q.executeTakeFirst()
}
export type ProposalRow = NonNullable<Awaited<ReturnType<typeof findProposal>>>

export function listProposals(
  db: Q,
  q: Omit<ChangeProposalListQuery, 'siteId'> & { siteIds: number[]; userId: number },
) {
  let query = base(db).where('p.site_id', 'in', idsOrNone(q.siteIds))
  if (q.status?.length) query = query.where('p.status', 'in', q.status)
  if (q.limitId !== undefined) query = query.where('p.limit_id', '=', q.limitId)
  if (q.mine) query = query.where('p.proposer_id', '=', q.userId)
  return pageWithTotal(query, q, (filtered) =>
    filtered.select(COLUMNS).orderBy('p.created_at', 'desc').orderBy('p.id', 'desc'),
  )
}

/** The limit a proposal is about, held against a concurrent retirement until the proposal is written. */
export async function limitSite(db: Q, limitId: number) {
  return db
    .selectFrom('limit_function')
    .select(['site_id', 'tag', 'status'])
    .where('id', '=', limitId)
    .forShare()
    .executeTakeFirst()
}

export async function insertProposal(
  trx: Trx,
  v: { siteId: number; limitId: number | null; title: string; reason: string; proposerId: number; now: Date },
) {
  const { id } = await trx
    .insertInto('change_proposal')
    .values({
      site_id: v.siteId,
      limit_id: v.limitId,
      title: v.title,
      reason: v.reason,
      proposer_id: v.proposerId,
      created_at: v.now,
    })
    .returning('id')
    .executeTakeFirstOrThrow()
  return id
}

export async function decideProposal(
  trx: Trx,
  id: number,
  v: { status: 'taken_up' | 'declined'; by: number; at: Date; declineReason?: string; changeRequestId?: number },
) {
  await trx
    .updateTable('change_proposal')
    .set({
      status: v.status,
      decided_by: v.by,
      decided_at: v.at,
      decline_reason: v.declineReason ?? null,
      change_request_id: v.changeRequestId ?? null,
    })
    .where('id', '=', id)
    .execute()
}

export async function requestForTakeUp(db: Q, id: number) {
  return db.selectFrom('change_request').select(['id', 'site_id', 'status']).where('id', '=', id).executeTakeFirst()
}

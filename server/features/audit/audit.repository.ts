import { sql, type Transaction } from 'kysely'
import type { Clock } from '../../clock.ts'
import type { Db } from '../../db/index.ts'
import type { Database } from '../../db/schema.ts'
import { GENESIS_HASH, hashEvent } from './audit.hash.ts'

/** Who did it, from where, in which request: carried from the HTTP request down to every audit event. */
export interface AuditContext {
  actorId: number | null
  requestId: string | null
  ip: string | null
}

export interface AuditEntry {
  action: string
  entityType: string
  entityId?: string | number | null
  before?: unknown
  after?: unknown
  reason?: string | null
  batchId?: string | null
}

// One constant advisory-lock key for the single chain.
const AUDIT_CHAIN_LOCK = 7263001

/** JSON values as jsonb will give them back: no undefined, no functions, dates as ISO strings. */
function toJsonValue(v: unknown): unknown {
  return v === undefined ? null : JSON.parse(JSON.stringify(v))
}

/**
 * Appends events to the hash chain. Call it as the last step of the business transaction (READ COMMITTED):
 * the advisory lock it takes is held until COMMIT.
 */
export async function appendAudit(
  trx: Transaction<Database>,
  clock: Clock,
  ctx: AuditContext,
  entries: AuditEntry | AuditEntry[],
): Promise<void> {
  const list = Array.isArray(entries) ? entries : [entries]
  if (!list.length) return
  await sql`SELECT pg_advisory_xact_lock(${sql.lit(AUDIT_CHAIN_LOCK)})`.execute(trx)
  const head = await trx.selectFrom('audit_event').select('hash').orderBy('id', 'desc').limit(1).executeTakeFirst()
  let prevHash = head?.hash ?? GENESIS_HASH
  const occurredAt = new Date(clock.now().getTime())
  const rows = list.map((e) => {
    const content = {
      occurredAt,
      actorId: ctx.actorId,
      action: e.action,
      entityType: e.entityType,
      entityId: e.entityId == null ? null : String(e.entityId),
      before: toJsonValue(e.before),
      after: toJsonValue(e.after),
      reason: e.reason ?? null,
      batchId: e.batchId ?? null,
      requestId: ctx.requestId,
      ip: ctx.ip,
      prevHash,
    }
    const hash = hashEvent(content)
    prevHash = hash
    return {
      occurred_at: occurredAt,
      actor_id: content.actorId,
      action: content.action,
      entity_type: content.entityType,
      entity_id: content.entityId,
      before: JSON.stringify(content.before),
      after: JSON.stringify(content.after),
      reason: content.reason,
      batch_id: content.batchId,
      request_id: content.requestId,
      ip: content.ip,
      prev_hash: content.prevHash,
      hash,
    }
  })
  for (let i = 0; i < rows.length; i += 500) {
    await trx
      .insertInto('audit_event')
      .values(rows.slice(i, i + 500))
      .execute()
  }
}

/** Appends in a transaction of its own (sign-in events that change nothing else). */
export async function appendAuditAlone(db: Db, clock: Clock, ctx: AuditContext, entry: AuditEntry): Promise<void> {
  await db.transaction().execute((trx) => appendAudit(trx, clock, ctx, entry))
}

export interface VerifyResult {
  ok: boolean
  checked: number
  badId?: number
  problem?: string
  headId?: number
  headHash?: string
}

/** Walks the chain in id order, in keyset pages, and reports the first broken link. */
export async function verifyAuditChain(db: Db, pageSize = 5000): Promise<VerifyResult> {
  let lastId = 0
  let prev = GENESIS_HASH
  let checked = 0
  for (;;) {
    const page = await db
      .selectFrom('audit_event')
      .selectAll()
      .where('id', '>', lastId)
      .orderBy('id')
      .limit(pageSize)
      .execute()
    if (!page.length) break
    for (const r of page) {
      if (r.prev_hash !== prev)
        return { ok: false, checked, badId: r.id, problem: 'prev_hash does not match the previous event' }
      const recomputed = hashEvent({
        occurredAt: r.occurred_at,
        actorId: r.actor_id,
        action: r.action,
        entityType: r.entity_type,
        entityId: r.entity_id,
        before: r.before,
        after: r.after,
        reason: r.reason,
        batchId: r.batch_id,
        requestId: r.request_id,
        ip: r.ip,
        prevHash: r.prev_hash,
      })
      if (recomputed !== r.hash) return { ok: false, checked, badId: r.id, problem: 'hash does not match content' }
      prev = r.hash
      lastId = r.id
      checked++
    }
  }
  return { ok: true, checked, headId: lastId || undefined, headHash: checked ? prev : undefined }
}

import { sql, type Transaction } from 'kysely'
import type { Clock } from '../../clock.ts'
import type { Db } from '../../db/index.ts'
import type { Database } from '../../db/schema.ts'
import { GENESIS_HASH, hashEvent } from './audit.hash.ts'
import { type AuditKeys, linkOf, loadAuditKeys } from './audit.key.ts'
import { type AuditEntityType, resolveAuditSites } from './audit.sites.ts'
import { likeEscape } from '../../authorize.ts'

/** Who did it, from where, in which request: carried from the HTTP request down to every audit event. */
export interface AuditContext {
  actorId: number | null
  requestId: string | null
  ip: string | null
}

export interface AuditEntry {
  action: string
  entityType: AuditEntityType
  entityId?: string | number | null
  before?: unknown
  after?: unknown
  reason?: string | null
  batchId?: string | null
  /**
   * The site the event is about; null for an installation-wide event. When absent, the site is the entity's
   * (server/features/audit/audit.sites.ts).
   */
  siteId?: number | null
}

// One constant advisory-lock key for the single chain.
const AUDIT_CHAIN_LOCK = 7263001

/** JSON values as jsonb will give them back: no undefined, no functions, dates as ISO strings. */
function toJsonValue(v: unknown): unknown {
  return v === undefined ? null : JSON.parse(JSON.stringify(v))
}

/**
 * Appends events to the hash chain. Call it as the last step of the business transaction (READ COMMITTED):
 * the advisory lock it takes is held until COMMIT. Under that lock the events are numbered one after the head without
 * gaps, hashed over their content, id and site and the previous hash, and linked with the audit key
 * (`link` = HMAC-SHA256 of the hash; the key is read from AUDIT_KEY_FILE and used in this step only).
 */
export async function appendAudit(
  trx: Transaction<Database>,
  clock: Clock,
  ctx: AuditContext,
  entries: AuditEntry | AuditEntry[],
): Promise<void> {
  const list = Array.isArray(entries) ? entries : [entries]
  if (!list.length) return
  const { linkKey } = loadAuditKeys()
  // the entity's site is read before the chain's lock, so the lock is held for the append only
  const sites = await resolveAuditSites(
    trx,
    list.map((e) => ({
      entityType: e.entityType,
      entityId: e.entityId == null ? null : String(e.entityId),
      before: e.before,
      after: e.after,
    })),
  )
  await sql`SELECT pg_advisory_xact_lock(${sql.lit(AUDIT_CHAIN_LOCK)})`.execute(trx)
  const head = await trx
    .selectFrom('audit_event')
    .select(['id', 'hash'])
    .orderBy('id', 'desc')
    .limit(1)
    .executeTakeFirst()
  let prevHash = head?.hash ?? GENESIS_HASH
  let id = Number(head?.id ?? 0)
  const occurredAt = new Date(clock.now().getTime())
  const rows = list.map((e, i) => {
    id++
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
      keyed: { id, siteId: e.siteId !== undefined ? e.siteId : sites[i] },
    }
    const hash = hashEvent(content)
    prevHash = hash
    return {
      id,
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
      link: linkOf(hash, linkKey),
      site_id: content.keyed.siteId,
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
  /** The first event concerned: the one changed or forged, or the id missing. */
  badId?: number
  problem?: string
  /** The checkpoint file a truncation, rewrite or insertion was found against. */
  checkpoint?: string
  headId?: number
  headHash?: string
  /** Events before the first keyed one (written before keyed links): hash-chained only. */
  unkeyed?: number
}

/** A signed statement of the chain head at a moment (server/features/audit/audit.checkpoint.ts). */
export interface CheckpointClaim {
  file: string
  headId: number
  headHash: string
  count: number
  firstKeyedId: number | null
}

/**
 * Walks the chain in id order, in keyset pages, and reports the first broken link: a changed event (its hash), a
 * forged or rewritten one (its keyed link), a deleted one (the id missing from the keyed, gap-free numbering or the
 * link to it broken), and, against each signed checkpoint, a truncation (the checkpoint's head is gone), a rewrite
 * (the head has another hash) or an insertion (more events up to the head than the checkpoint counted).
 */
export async function verifyAuditChain(
  db: Db,
  opts: { keys?: AuditKeys; checkpoints?: CheckpointClaim[]; pageSize?: number } = {},
): Promise<VerifyResult> {
  const keys = opts.keys ?? loadAuditKeys()
  const pageSize = opts.pageSize ?? 5000
  const checkpoints = [...(opts.checkpoints ?? [])].sort((a, b) => a.headId - b.headId)
  let cp = 0
  let lastId = 0
  let prev = GENESIS_HASH
  let checked = 0
  let unkeyed = 0
  let keyedFrom: number | null = null
  const broken = (badId: number, problem: string, checkpoint?: string): VerifyResult => ({
    ok: false,
    checked,
    badId,
    problem,
    ...(checkpoint ? { checkpoint } : {}),
  })
  /** Checks the checkpoints whose head lies before `nextId` (the next event read, or none at the end). */
  const settle = (nextId: number | null): VerifyResult | null => {
    while (cp < checkpoints.length && (nextId === null || checkpoints[cp].headId < nextId)) {
      const c = checkpoints[cp]
      if (c.headId !== lastId)
        return nextId === null && c.headId > lastId
          ? broken(
              lastId + 1,
              `events from ${lastId + 1} to ${c.headId} (checkpoint ${c.file}) are missing: truncated`,
              c.file,
            )
          : broken(c.headId, `event ${c.headId}, the head of checkpoint ${c.file}, is missing (deleted)`, c.file)
      if (c.headHash !== prev)
        return broken(
          c.headId,
          `event ${c.headId} no longer has the hash checkpoint ${c.file} signed: rewritten`,
          c.file,
        )
      if (c.count !== checked)
        return broken(
          c.headId,
          checked > c.count
            ? `${checked - c.count} event(s) more up to event ${c.headId} than checkpoint ${c.file} counted: inserted`
            : `${c.count - checked} event(s) fewer up to event ${c.headId} than checkpoint ${c.file} counted: deleted`,
          c.file,
        )
      if (c.firstKeyedId !== keyedFrom)
        return broken(
          c.firstKeyedId ?? keyedFrom ?? c.headId,
          `keyed links began at event ${c.firstKeyedId ?? '-'} when checkpoint ${c.file} was signed, now at ${keyedFrom ?? '-'}: rewritten`,
          c.file,
        )
      cp++
    }
    return null
  }
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
      const id = Number(r.id)
      const pending = settle(id)
      if (pending) return pending
      if (keyedFrom !== null && id !== lastId + 1)
        return broken(
          lastId + 1,
          `event ${lastId + 1} is missing (deleted)${id > lastId + 2 ? ` up to ${id - 1}` : ''}`,
        )
      if (r.prev_hash !== prev) {
        // an event taken out where numbering has gaps (before keyed links) shows as a broken link to it
        return broken(
          id,
          `prev_hash does not match the previous event${keyedFrom === null ? ' (an event before it was changed or deleted)' : ''}`,
        )
      }
      if (r.link === null && keyedFrom !== null)
        return broken(id, 'event has no keyed link although the events before it have: forged or rewritten')
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
        keyed: r.link === null ? undefined : { id, siteId: r.site_id },
      })
      if (recomputed !== r.hash) return broken(id, 'hash does not match content')
      if (r.link !== null) {
        if (r.link !== linkOf(r.hash, keys.linkKey))
          return broken(id, 'keyed link does not match: written or rewritten without the audit key')
        keyedFrom ??= id
      } else unkeyed++
      prev = r.hash
      lastId = id
      checked++
    }
  }
  const pending = settle(null)
  if (pending) return pending
  return {
    ok: true,
    checked,
    headId: lastId || undefined,
    headHash: checked ? prev : undefined,
    ...(unkeyed ? { unkeyed } : {}),
  }
}

/**
 * Whose events a reader sees (docs/security.md, "Whose events a reader sees"): the events of `siteIds` (the sites
 * where they are administrator, plant manager or auditor), installation-wide events about accounts that hold a role at
 * one of those sites, and, for an administrator, installation-wide events about no site's account (the installation,
 * sign-in attempts for unknown addresses, accounts without roles).
 */
export interface AuditScope {
  siteIds: number[]
  installationWide: boolean
}

export interface AuditFilters {
  entityType?: string
  entityId?: string
  actorId?: number
  action?: string
  siteId?: number
  from?: string
  to?: string
  q?: string
}

/** The events a scope may read, filtered; joined with the actor's name and the site. */
export function auditEventsQuery(db: Db, scope: AuditScope, f: AuditFilters) {
  const site = sql<number | null>`coalesce(audit_event.site_id, audit_event_site.site_id)`
  let base = db
    .selectFrom('audit_event')
    .leftJoin('audit_event_site', 'audit_event_site.event_id', 'audit_event.id')
    .leftJoin('app_user', 'app_user.id', 'audit_event.actor_id')
    .where((eb) => {
      const userAtSites = eb
        .selectFrom('role_assignment')
        .select(sql<string>`role_assignment.user_id::text`.as('u'))
        .where('role_assignment.site_id', 'in', scope.siteIds.length ? scope.siteIds : [0])
      const anyRole = eb
        .selectFrom('role_assignment')
        .select('role_assignment.user_id')
        .where(sql<boolean>`role_assignment.user_id::text = audit_event.entity_id`)
      const siteless = eb(site, 'is', null)
      return eb.or([
        ...(scope.siteIds.length ? [eb(site, 'in', scope.siteIds)] : []),
        eb.and([siteless, eb('audit_event.entity_type', '=', 'User'), eb('audit_event.entity_id', 'in', userAtSites)]),
        ...(scope.installationWide
          ? [
              eb.and([
                siteless,
                eb.or([
                  eb('audit_event.entity_type', '<>', 'User'),
                  eb('audit_event.entity_id', 'is', null),
                  eb.not(eb.exists(anyRole)),
                ]),
              ]),
            ]
          : []),
      ])
    })
  if (f.entityType) base = base.where('audit_event.entity_type', '=', f.entityType)
  if (f.entityId) base = base.where('audit_event.entity_id', '=', f.entityId)
  if (f.actorId) base = base.where('audit_event.actor_id', '=', f.actorId)
  if (f.action) base = base.where('audit_event.action', 'like', `${likeEscape(f.action)}%`)
  if (f.siteId) base = base.where(site, '=', f.siteId)
  if (f.from) base = base.where('audit_event.occurred_at', '>=', new Date(f.from))
  if (f.to) base = base.where('audit_event.occurred_at', '<', new Date(f.to))
  if (f.q) {
    const like = `%${likeEscape(f.q)}%`
    base = base.where((eb) =>
      eb.or([eb('audit_event.action', 'ilike', like), eb('app_user.display_name', 'ilike', like)]),
    )
  }
  return base.select(site.as('effective_site_id'))
}

// The tag, title or name of each entity an event names, read now; and, for records that belong to a limit, the limit.
const TITLE_SOURCES: Partial<Record<AuditEntityType, { table: string; title?: string; limit?: boolean }>> = {
  Site: { table: 'site', title: 'name' },
  Area: { table: 'area', title: 'name' },
  Process: { table: 'process', title: 'name' },
  Instrument: { table: 'instrument', title: 'tag' },
  Limit: { table: 'limit_function', title: 'tag' },
  ImportBatch: { table: 'import_batch', title: 'file_name' },
  ChangeRequest: { table: 'change_request', title: 'title' },
  Finding: { table: 'finding', title: 'tag' },
  ReconciliationSource: { table: 'reconciliation_source', title: 'name' },
  ReconciliationRun: { table: 'reconciliation_run', title: 'file_name' },
  alarm_journal_upload: { table: 'alarm_journal_upload', title: 'file_name' },
  process_data_upload: { table: 'process_data_upload', title: 'file_name' },
  User: { table: 'app_user', title: 'display_name' },
  TripTest: { table: 'trip_test', limit: true },
  TestDeferral: { table: 'test_deferral', limit: true },
  Bypass: { table: 'bypass', limit: true },
  Demand: { table: 'demand', limit: true },
  alarm_state: { table: 'alarm_state', title: 'tag', limit: true },
}

export interface EntityTitle {
  title: string | null
  limitId: number | null
}

/** Titles of the entities named by `events`, keyed `type:id` (one query per entity type). */
export async function entityTitles(
  db: Db,
  events: { entityType: string; entityId: string | null }[],
): Promise<Map<string, EntityTitle>> {
  const out = new Map<string, EntityTitle>()
  const ids = new Map<AuditEntityType, Set<number>>()
  for (const e of events) {
    const src = TITLE_SOURCES[e.entityType as AuditEntityType]
    if (!src || e.entityId === null || !/^[1-9]\d{0,8}$/.test(e.entityId)) continue
    const set = ids.get(e.entityType as AuditEntityType) ?? new Set<number>()
    set.add(Number(e.entityId))
    ids.set(e.entityType as AuditEntityType, set)
  }
  for (const [type, set] of ids) {
    const src = TITLE_SOURCES[type]!
    const list = [...set]
    if (src.limit) {
      const rows = await db
        .selectFrom(`${src.table} as t` as 'trip_test as t')
        .leftJoin('limit_function', 'limit_function.id', 't.limit_id')
        .select([
          't.id',
          't.limit_id',
          src.title ? sql<string | null>`${sql.ref(`t.${src.title}`)}::text`.as('tag') : 'limit_function.tag',
        ])
        .where('t.id', 'in', list)
        .execute()
      for (const r of rows) out.set(`${type}:${r.id}`, { title: r.tag, limitId: r.limit_id })
    } else {
      const rows = await db
        .selectFrom(src.table as 'site')
        .select(['id', sql<string | null>`${sql.ref(src.title!)}::text`.as('title')])
        .where('id', 'in', list)
        .execute()
      for (const r of rows) out.set(`${type}:${r.id}`, { title: r.title, limitId: type === 'Limit' ? r.id : null })
    }
  }
  return out
}

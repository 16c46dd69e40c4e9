import { sql, type Transaction } from 'kysely'
import { type Clock, systemClock } from '../../clock.ts'
import { type Db, kyselyOn, poolOf } from '../../db/index.ts'
import type pg from 'pg'
import { copyOut } from '../../db/copy-out.ts'
import type { Database } from '../../db/schema.ts'
import { batchesOf } from '../../db/batches.ts'
import { availableParallelism } from 'node:os'
import {
  advance,
  chainPageCopy,
  type CheckpointClaim,
  checkCopyPage,
  dataOf,
  contentProblem,
  type EventRow,
  genesisState,
  linkProblem,
  type PageCheck,
  type PageRange,
  pageRoom,
  rowsOfCopy,
  stitchPages,
  type WalkState,
} from './audit.chain.ts'
import { dataHash, GENESIS_HASH, sealHash } from './audit.hash.ts'
import { type AuditKeys, linkHasher, loadAuditKeys } from './audit.key.ts'
import { checkPagesInThreads, workerBundle } from './audit.verify.pages.ts'
import { AUDIT_ENTITY_SITE, type AuditEntityType } from './audit.sites.ts'
import { likeEscape } from '../../authorize.ts'
import { NOTICE_RECIPIENTS } from '../../../shared/abilities/notices.ts'

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
   * (server/features/audit/audit.sites.ts), looked up in the entity's table: a caller that holds the record passes
   * its site and saves that query.
   */
  siteId?: number | null
}

// One constant advisory-lock key: held by the sealer while it links a batch, so two sealers never interleave.
const AUDIT_SEAL_LOCK = 7263001

/** JSON values as the recorded-state column gives them back: no undefined, no functions, dates as ISO strings. */
function toJsonValue(v: unknown): unknown {
  return v === undefined ? null : JSON.parse(JSON.stringify(v))
}

/**
 * Writes events in the business transaction, unsealed: content, site and `data_hash` (the SHA-256 of both), with an
 * id from the identity sequence. No lock and no key: the sealer (`sealAuditEvents`, run by the job `audit.seal`)
 * links committed events into the chain afterwards. An event commits or rolls back with the change it records.
 */
export async function appendAudit(
  trx: Transaction<Database>,
  clock: Clock,
  ctx: AuditContext,
  entries: AuditEntry | AuditEntry[],
): Promise<void> {
  const list = Array.isArray(entries) ? entries : [entries]
  if (!list.length) return
  const unplaced = list.filter((e) => e.siteId === undefined)
  const found = await resolveAuditSites(
    trx,
    unplaced.map((e) => ({
      entityType: e.entityType,
      entityId: e.entityId == null ? null : String(e.entityId),
      before: e.before,
      after: e.after,
    })),
  )
  const sites = new Map(unplaced.map((e, i) => [e, found[i]]))
  const occurredAt = new Date(clock.now().getTime())
  const rows = list.map((e) => {
    const content = {
      siteId: e.siteId !== undefined ? e.siteId : (sites.get(e) ?? null),
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
    }
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
      site_id: content.siteId,
      data_hash: dataHash(content),
    }
  })
  for (const batch of batchesOf(rows, 500)) await trx.insertInto('audit_event').values(batch).execute()
}

/** Appends in a transaction of its own (sign-in events that change nothing else). */
export async function appendAuditAlone(db: Db, clock: Clock, ctx: AuditContext, entry: AuditEntry): Promise<void> {
  await db.transaction().execute((trx) => appendAudit(trx, clock, ctx, entry))
}

/** An event to place: its entity, and the `siteId` its before/after state names (an entity deleted in the change). */
export interface SiteQuestion {
  entityType: AuditEntityType
  entityId: string | null
  before?: unknown
  after?: unknown
}

const INT = /^[1-9]\d{0,9}$/

function siteIdIn(state: unknown): number | null {
  if (state && typeof state === 'object' && 'siteId' in state) {
    const v = (state as { siteId: unknown }).siteId
    if (typeof v === 'number' && Number.isInteger(v)) return v
  }
  return null
}

/**
 * The site of each event (server/features/audit/audit.sites.ts): read from the entity's table in the caller's
 * transaction (one query per entity type), or, when the entity is gone (deleted in the same change) or has no numeric
 * id, from the `siteId` of its before/after state. Installation-wide entity types give null.
 */
export async function resolveAuditSites(
  db: Db | Transaction<Database>,
  events: SiteQuestion[],
): Promise<(number | null)[]> {
  const found = new Map<string, number>()
  const byTable = new Map<string, Set<number>>()
  for (const e of events) {
    const table = AUDIT_ENTITY_SITE[e.entityType]
    if (table === undefined) throw new Error(`audit entity type ${e.entityType} has no site rule`)
    if (table === null || table === 'self' || e.entityId === null || !INT.test(e.entityId)) continue
    const id = Number(e.entityId)
    if (id > 2147483647) continue
    let ids = byTable.get(table)
    if (!ids) byTable.set(table, (ids = new Set()))
    ids.add(id)
  }
  for (const [table, ids] of byTable) {
    for (const batch of batchesOf([...ids], 1000)) {
      const rows = await db
        .selectFrom(table as 'area')
        .select(['id', 'site_id'])
        .where('id', 'in', batch)
        .execute()
      for (const r of rows) found.set(`${table}:${r.id}`, r.site_id)
    }
  }
  return events.map((e) => {
    const table = AUDIT_ENTITY_SITE[e.entityType]
    if (table === null) return null
    if (table === 'self') return e.entityId !== null && INT.test(e.entityId) ? Number(e.entityId) : null
    const site = e.entityId === null ? undefined : found.get(`${table}:${e.entityId}`)
    return site ?? siteIdIn(e.after) ?? siteIdIn(e.before)
  })
}

/** The sealed event at the head of the chain (the highest chain position), if any. */
function chainHead(db: Db | Transaction<Database>) {
  return db
    .selectFrom('audit_event')
    .select(['id', 'seq', 'hash'])
    .where('seq', 'is not', null)
    .orderBy('seq', 'desc')
    .limit(1)
    .executeTakeFirst()
}

/**
 * What a checkpoint signs, read in one snapshot: the sealed head, the number of sealed events and the chain position
 * where keyed links began.
 */
export function readSealedHead(db: Db) {
  return db
    .transaction()
    .setIsolationLevel('repeatable read')
    .execute(async (trx) => {
      const last = await chainHead(trx)
      const agg = await trx
        .selectFrom('audit_event')
        .select((eb) => [
          eb.fn.countAll<string>().as('n'),
          eb.fn.min('seq').filterWhere('link', 'is not', null).as('firstKeyed'),
        ])
        .where('seq', 'is not', null)
        .executeTakeFirstOrThrow()
      return { last, count: Number(agg.n), firstKeyed: agg.firstKeyed == null ? null : Number(agg.firstKeyed) }
    })
}

/** The addresses of the active auditors of every site (who receive each checkpoint). */
export async function activeAuditorEmails(db: Db): Promise<string[]> {
  const rows = await db
    .selectFrom('app_user')
    .innerJoin('role_assignment', 'role_assignment.user_id', 'app_user.id')
    .select('app_user.email')
    .distinct()
    .where('role_assignment.role', 'in', [...NOTICE_RECIPIENTS.auditCheckpoint])
    .where('app_user.active', '=', true)
    .execute()
  return rows.map((r) => r.email)
}

/** Events a sealer run links at most, in one transaction. */
export const SEAL_BATCH = 2000

/**
 * The sealer: links up to `batch` committed unsealed events, in id order, after the chain's head, in one transaction
 * under the seal lock. Each gets the next chain position (`seq`), the head's hash as `prev_hash`, `hash` over its id,
 * position, data hash and previous hash, and `link` = HMAC-SHA256 of `hash` under the audit key. An event that commits
 * after a later id was sealed is sealed by the next run, further along the chain: the position, not the id, is the
 * order. Answers how many it sealed and how many still wait (0 when it took them all).
 */
export async function sealAuditEvents(
  db: Db,
  clock: Clock,
  opts: { batch?: number; keys?: AuditKeys } = {},
): Promise<{ sealed: number; headSeq: number }> {
  const link = linkHasher((opts.keys ?? loadAuditKeys()).linkKey)
  const batch = opts.batch ?? SEAL_BATCH
  return db.transaction().execute(async (trx) => {
    await sql`SELECT pg_advisory_xact_lock(${sql.lit(AUDIT_SEAL_LOCK)})`.execute(trx)
    // read after the lock: at READ COMMITTED each statement sees what committed before it, the last seal included
    const waiting = await trx
      .selectFrom('audit_event')
      .select(['id', 'data_hash'])
      .where('seq', 'is', null)
      .orderBy('id')
      .limit(batch)
      .execute()
    const head = await chainHead(trx)
    let seq = Number(head?.seq ?? 0)
    if (!waiting.length) return { sealed: 0, headSeq: seq }
    let prevHash = head?.hash ?? GENESIS_HASH
    const ids: string[] = []
    const seqs: string[] = []
    const prevs: string[] = []
    const hashes: string[] = []
    const links: string[] = []
    for (const w of waiting) {
      seq++
      const id = Number(w.id)
      const hash = sealHash({ id, seq, dataHash: w.data_hash!, prevHash })
      ids.push(String(id))
      seqs.push(String(seq))
      prevs.push(prevHash)
      hashes.push(hash)
      links.push(link(hash))
      prevHash = hash
    }
    await sql`
      UPDATE audit_event e
      SET seq = v.seq, prev_hash = v.prev_hash, hash = v.hash, link = v.link, sealed_at = ${clock.now()}
      FROM unnest(${ids}::bigint[], ${seqs}::bigint[], ${prevs}::text[], ${hashes}::text[], ${links}::text[])
        AS v(id, seq, prev_hash, hash, link)
      WHERE e.id = v.id`.execute(trx)
    return { sealed: waiting.length, headSeq: seq }
  })
}

/** Seals until nothing waits (tests, the demo seed, the bench); answers how many it sealed. */
export async function sealAll(db: Db, clock: Clock): Promise<number> {
  let total = 0
  for (;;) {
    const { sealed } = await sealAuditEvents(db, clock)
    total += sealed
    if (sealed < SEAL_BATCH) return total
  }
}

/** An event may wait this long for its seal before the verifier reports it. */
export const UNSEALED_BOUND_SECONDS = 60

export interface VerifyResult {
  ok: boolean
  /** Sealed events checked. */
  checked: number
  /** The first event concerned: the one changed or forged, the one after a missing one, or one left unsealed. */
  badId?: number
  /** The chain position concerned (a missing event has no id left to name). */
  badSeq?: number
  problem?: string
  /** The checkpoint file a truncation, rewrite or insertion was found against. */
  checkpoint?: string
  headId?: number
  headSeq?: number
  headHash?: string
  /** Events before the first keyed one (written before keyed links): hash-chained only. */
  unkeyed?: number
  /** Events written and not yet sealed, all younger than the bound. */
  unsealed?: number
}

export type { CheckpointClaim }
export { recordedFields } from './audit.chain.ts'

type Reader = Db | Transaction<Database>

/**
 * Pages of `size` chain positions covering every sealed event (at least one page): positions are gap-free, so each page
 * holds `size` events (fewer where events are missing).
 * Where the positions are sparse (a chain rewritten behind the app), the pages begin
 * at every `size`-th sealed event instead, read from the positions' index, so no page is empty.
 */
async function pageRanges(db: Reader, size: number): Promise<PageRange[]> {
  const { rows } = await sql<{ lo: number | null; hi: number | null; n: number }>`
    SELECT min(seq) AS lo, max(seq) AS hi, count(*) AS n FROM audit_event WHERE seq IS NOT NULL`.execute(db)
  const { lo, hi, n } = rows[0]
  // no sealed event: one empty page, against which every checkpoint is checked (and finds its events gone)
  if (lo === null || hi === null) return [{ from: 0, to: 0 }]
  let starts: number[]
  if (hi - lo < 2 * n) starts = Array.from({ length: Math.ceil((hi - lo + 1) / size) }, (_, i) => lo + i * size)
  else {
    const r = await sql<{ seq: number }>`
      SELECT seq FROM (SELECT seq, row_number() OVER (ORDER BY seq) AS n FROM audit_event WHERE seq IS NOT NULL) s
      WHERE n % ${size} = 1 ORDER BY seq`.execute(db)
    starts = r.rows.map((x) => Number(x.seq))
  }
  return starts.map((from, i) => ({ from, to: i + 1 < starts.length ? starts[i + 1] : hi + 1 }))
}

/**
 * A page of the chain in chain order as PostgreSQL's binary copy of its events (audit.chain.ts, CHAIN_COLUMNS), read
 * from the socket into one buffer (server/db/copy-out.ts).
 */
function chainPage(client: pg.PoolClient, range: PageRange): Promise<Buffer> {
  return copyOut(client, chainPageCopy(range), pageRoom(range))
}

/** A page of unsealed events in id order after id `after`. */
function unsealedPage(db: Reader, after: number, size: number): Promise<EventRow[]> {
  return sql<EventRow>`
    SELECT ${sql.raw(EVENT_COLUMNS)} FROM audit_event WHERE seq IS NULL AND id > ${after} ORDER BY id LIMIT ${size}`
    .execute(db)
    .then((r) => r.rows)
}

const EVENT_COLUMNS = `id, (extract(epoch FROM occurred_at) * 1000)::bigint AS occurred_ms, actor_id, action,
  entity_type, entity_id, before, after, reason, batch_id, request_id, ip, site_id, data_hash`

/** Chains at least this long are walked by worker threads (shorter ones cost less than starting them). */
const PARALLEL_FROM_PAGES = 3

/**
 * Walks the sealed chain in chain order and reports the first broken link: a changed event (its hash), a forged or
 * rewritten one (its keyed link), a deleted one (its chain position missing, or the link to it broken), and, against
 * each signed checkpoint, a truncation (the checkpoint's head is gone), a rewrite (the head has another hash) or an
 * insertion (more events up to the head than the checkpoint counted). Then the unsealed events: each content against
 * the data hash written with it (no key guards that yet), and one older than the bound (UNSEALED_BOUND_SECONDS by
 * `clock`) is reported, since the sealer should have linked it.
 *
 * Everything is read in one snapshot (REPEATABLE READ). The chain comes in pages of `pageSize` chain positions, each
 * PostgreSQL's binary copy of its events; a long chain's pages are read and checked by `workers` threads side by
 * side, each on a connection of its own sharing the snapshot (pg_export_snapshot), each page on its own, then joined:
 * each page's
 * first event must tie to the page before and each checkpoint hold where its head lies (audit.chain.ts, stitchPages).
 * Every event is hashed again with the key, whatever the pages. When anything fails, the chain is walked again in one
 * piece in the same snapshot to name the first problem. `db` must come from createDb (its pool sends the COPY).
 */
export async function verifyAuditChain(
  db: Db,
  opts: {
    keys?: AuditKeys
    checkpoints?: CheckpointClaim[]
    pageSize?: number
    clock?: Clock
    unsealedBoundSeconds?: number
    /** Worker threads for a long chain (default: one per CPU, at most 4; 0 checks every page in this thread). */
    workers?: number
  } = {},
): Promise<VerifyResult> {
  const keys = opts.keys ?? loadAuditKeys()
  const pageSize = opts.pageSize ?? 10_000
  const checkpoints = [...(opts.checkpoints ?? [])].sort((a, b) => a.headSeq - b.headSeq)
  const pool = poolOf(db)
  if (!pool) throw new Error('verifyAuditChain needs a database made by createDb')
  // the worker threads' script is bundled while the snapshot is taken and the pages are counted
  if (opts.workers !== 0) void workerBundle()
  const client = await pool.connect()
  let healthy = false
  try {
    await client.query('BEGIN ISOLATION LEVEL REPEATABLE READ READ ONLY')
    const trx = kyselyOn(client)
    const ranges = await pageRanges(trx, pageSize)
    const threads = ranges.length >= PARALLEL_FROM_PAGES ? (opts.workers ?? Math.min(availableParallelism(), 4)) : 0
    const end = await walkInPages(pool, client, ranges, checkpoints, keys.linkKey, threads)
    let result = end ? intact(end) : await walkInOnePiece(client, ranges, checkpoints, keys.linkKey)
    if (result.ok)
      result = await checkUnsealed(trx, result, opts.clock ?? systemClock, opts.unsealedBoundSeconds, pageSize)
    await client.query('COMMIT')
    healthy = true
    return result
  } finally {
    // a connection left in a failed transaction or a cut-off COPY is closed rather than handed back
    client.release(!healthy)
  }
}

/**
 * The pages checked each on its own and joined: by `threads` worker threads, each reading the pages it takes over a
 * connection of its own in this walk's snapshot (pg_export_snapshot), or, with none, read over `client` and checked in
 * this thread page after page. The walk's end, or null when anything failed.
 */
async function walkInPages(
  pool: pg.Pool,
  client: pg.PoolClient,
  ranges: PageRange[],
  checkpoints: CheckpointClaim[],
  linkKey: Buffer,
  threads: number,
): Promise<WalkState | null> {
  // the first page takes the checkpoints before it, the last those past the chain's end (a truncation)
  const last = ranges.length - 1
  const claims = ranges.map(({ from, to }, i) =>
    checkpoints.filter((c) => (i === 0 || c.headSeq >= from) && (i === last || c.headSeq < to)),
  )
  const heads = claims.map((c) => c.map((cp) => cp.headSeq))
  if (threads > 0) {
    const { rows } = await client.query<{ id: string }>('SELECT pg_export_snapshot() AS id')
    const snapshot = rows[0].id
    // a snapshot id is hex digits and dashes; SET TRANSACTION SNAPSHOT takes a literal only
    if (!/^[0-9A-F-]+$/i.test(snapshot)) throw new Error(`unexpected snapshot id ${snapshot}`)
    // a thread without a page to take would only open a connection
    const checks = await checkPagesInThreads(Math.min(threads, ranges.length), {
      pages: ranges.map((r, i) => ({ ...r, heads: heads[i] })),
      linkKey: new Uint8Array(linkKey),
      connectionString: pool.options.connectionString,
      connectTimeoutMs: pool.options.connectionTimeoutMillis,
      snapshot,
    })
    return stitchPages(checks, claims)
  }
  const link = linkHasher(linkKey)
  const checks: PageCheck[] = []
  for (let i = 0; i < ranges.length; i++) {
    checks.push(checkCopyPage(await chainPage(client, ranges[i]), heads[i], link))
    if (!checks[i].ok) return null
  }
  return stitchPages(checks, claims)
}

/** The walk in one piece, page after page in this thread, naming the first problem exactly. */
async function walkInOnePiece(
  client: pg.PoolClient,
  ranges: PageRange[],
  checkpoints: CheckpointClaim[],
  linkKey: Buffer,
): Promise<VerifyResult> {
  const st = genesisState()
  const link = linkHasher(linkKey)
  let cp = 0
  const broken = (at: { id?: number; seq?: number }, problem: string, checkpoint?: string): VerifyResult => ({
    ok: false,
    checked: st.checked,
    ...(at.id !== undefined ? { badId: at.id } : {}),
    ...(at.seq !== undefined ? { badSeq: at.seq } : {}),
    problem,
    ...(checkpoint ? { checkpoint } : {}),
  })
  /** Checks the checkpoints whose head lies before `next` (the next event read, or none at the end). */
  const settle = (next: { seq: number; id: number } | null): VerifyResult | null => {
    const { lastSeq, prev, checked, keyedFrom, lastId } = st
    while (cp < checkpoints.length && (next === null || checkpoints[cp].headSeq < next.seq)) {
      const c = checkpoints[cp]
      if (c.headSeq !== lastSeq)
        return next === null && c.headSeq > lastSeq
          ? broken(
              { seq: lastSeq + 1 },
              `events at chain positions ${lastSeq + 1} to ${c.headSeq} (checkpoint ${c.file}) are missing: truncated`,
              c.file,
            )
          : broken(
              { seq: c.headSeq, ...(next ? { id: next.id } : {}) },
              `the event at chain position ${c.headSeq}, the head of checkpoint ${c.file}, is missing (deleted)`,
              c.file,
            )
      if (c.headHash !== prev)
        return broken(
          { id: lastId, seq: c.headSeq },
          `event ${lastId} (chain position ${c.headSeq}) no longer has the hash checkpoint ${c.file} signed: rewritten`,
          c.file,
        )
      if (c.count !== checked)
        return broken(
          { id: lastId, seq: c.headSeq },
          checked > c.count
            ? `${checked - c.count} event(s) more up to chain position ${c.headSeq} ` +
                `than checkpoint ${c.file} counted: inserted`
            : `${c.count - checked} event(s) fewer up to chain position ${c.headSeq} ` +
                `than checkpoint ${c.file} counted: deleted`,
          c.file,
        )
      if (c.firstKeyedSeq !== keyedFrom)
        return broken(
          { seq: c.firstKeyedSeq ?? keyedFrom ?? c.headSeq },
          `keyed links began at chain position ${c.firstKeyedSeq ?? '-'} when checkpoint ${c.file} was signed, ` +
            `now at ${keyedFrom ?? '-'}: rewritten`,
          c.file,
        )
      cp++
    }
    return null
  }
  for (const range of ranges) {
    const rows = rowsOfCopy(await chainPage(client, range))
    for (const r of rows) {
      const pending = settle({ seq: r.seq, id: r.id })
      if (pending) return pending
      const p = linkProblem(r, st) ?? contentProblem(r, link)
      if (p) return broken(p.at, p.problem)
      advance(st, r)
    }
  }
  return settle(null) ?? intact(st)
}

/** The answer for a sealed chain walked to its end without a problem. */
function intact(st: WalkState): VerifyResult {
  return {
    ok: true,
    checked: st.checked,
    headId: st.lastId || undefined,
    headSeq: st.lastSeq || undefined,
    headHash: st.checked ? st.prev : undefined,
    ...(st.unkeyed ? { unkeyed: st.unkeyed } : {}),
  }
}

/** The unsealed events: each content against the data hash written with it, and each sealed within the bound. */
async function checkUnsealed(
  trx: Reader,
  sealed: VerifyResult,
  clock: Clock,
  boundSeconds: number | undefined,
  pageSize: number,
): Promise<VerifyResult> {
  const bound = boundSeconds ?? UNSEALED_BOUND_SECONDS
  const broken = (id: number, problem: string): VerifyResult => ({
    ok: false,
    checked: sealed.checked,
    badId: id,
    problem,
  })
  let unsealed = 0
  let oldest: { id: number; at: number } | null = null
  let afterId = 0
  for (;;) {
    const page = await unsealedPage(trx, afterId, pageSize)
    for (const r of page) {
      const id = r.id
      const d = dataHash(dataOf(r))
      if (d !== r.data_hash) return broken(id, 'hash does not match content')
      const at = r.occurred_ms
      if (!oldest || at < oldest.at) oldest = { id, at }
      unsealed++
      afterId = id
    }
    if (page.length < pageSize) break
  }
  if (oldest) {
    const waited = (clock.now().getTime() - oldest.at) / 1000
    if (waited > bound)
      return broken(
        oldest.id,
        `event ${oldest.id} has waited ${Math.round(waited)} s unsealed (more than ${bound} s): ` +
          'the sealer is not running, or the event was put there behind its back',
      )
  }
  return { ...sealed, ...(unsealed ? { unsealed } : {}) }
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

/** A page of the events a scope may read, newest first, after `cursor` (an id) or at `page`, and how many match. */
export async function listAuditEvents(
  db: Db,
  scope: AuditScope,
  q: AuditFilters & { page: number; pageSize: number; cursor?: number },
) {
  const base = auditEventsQuery(db, scope, q)
  const { n: total } = await base
    .clearSelect()
    .select((eb) => eb.fn.countAll<number>().as('n'))
    .executeTakeFirstOrThrow()
  let page = base
    .selectAll('audit_event')
    .select('app_user.display_name as actorName')
    .orderBy('audit_event.id', 'desc')
    .limit(q.pageSize)
  page = q.cursor ? page.where('audit_event.id', '<', q.cursor) : page.offset((q.page - 1) * q.pageSize)
  return { total, rows: await page.execute() }
}

/** Up to `limit` events a scope may read for the export, newest first, with the actor's name and address. */
export function auditExportPage(db: Db, scope: AuditScope, f: AuditFilters, cursor: number | null, limit: number) {
  let page = auditEventsQuery(db, scope, f)
    .selectAll('audit_event')
    .select(['app_user.display_name as actorName', 'app_user.email as actorEmail'])
    .orderBy('audit_event.id', 'desc')
    .limit(limit)
  if (cursor !== null) page = page.where('audit_event.id', '<', cursor)
  return page.execute()
}

/** Each site's code by its id. */
export async function siteCodesById(db: Db): Promise<Map<number, string>> {
  return new Map((await db.selectFrom('site').select(['id', 'code']).execute()).map((s) => [s.id, s.code]))
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

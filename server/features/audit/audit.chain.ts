import { hash } from 'node:crypto'
import { CanonicalWriter, CopyCursor, writeDataText } from './audit.copy.ts'
import { dataHash, type EventData, GENESIS_HASH, hashEvent, type LinkHasher, sealHash } from './audit.hash.ts'
import type { AuditRecorded } from '../../../shared/schemas/audit.ts'

// The checks of the chain walk (docs/adr/0003-audit-hash-chain.md, "Verify"), free of the database so that worker
// threads (server/features/audit/audit.verify.worker.ts) run them on pages of the chain as the main thread does.

/** An event as the verifier reads it: the time as milliseconds (no Date parsed per row), ids as numbers. */
export interface EventRow {
  id: number
  occurred_ms: number
  actor_id: number | null
  action: string
  entity_type: string
  entity_id: string | null
  before: unknown
  after: unknown
  reason: string | null
  batch_id: string | null
  request_id: string | null
  ip: string | null
  site_id: number | null
  data_hash: string | null
}

export interface ChainRow extends EventRow {
  seq: number
  prev_hash: string
  hash: string
  link: string | null
}

/**
 * The columns of a sealed event in the order `rowsOfCopy` reads them, as the chain walk has PostgreSQL send them: one
 * page of the chain as one `COPY … TO STDOUT (FORMAT binary)`, whose rows are length-prefixed raw values (no text to
 * escape or parse, docs/adr/0003-audit-hash-chain.md, "Verify").
 */
export const CHAIN_COLUMNS = `seq, id, occurred_at, actor_id, action, entity_type, entity_id, before, after, reason,
  batch_id::text, request_id, ip, site_id, data_hash, prev_hash, hash, link`
const CHAIN_FIELDS = 18
/** A page of the chain: the sealed events with chain positions in [from, to). */
export interface PageRange {
  from: number
  to: number
}

/**
 * The statement that copies a page of the chain in chain order, in PostgreSQL's binary format: one stream of
 * length-prefixed raw values, the cheapest form PostgreSQL writes rows in (read by server/db/copy-out.ts).
 */
export function chainPageCopy({ from, to }: PageRange): string {
  // COPY takes no parameters: the bounds are integers the walk computed, checked before they are written out
  if (!Number.isSafeInteger(from) || !Number.isSafeInteger(to)) throw new Error(`bad page ${from}..${to}`)
  return (
    `COPY (SELECT ${CHAIN_COLUMNS} FROM audit_event WHERE seq >= ${from} AND seq < ${to} ORDER BY seq) ` +
    'TO STDOUT (FORMAT binary)'
  )
}

/** Room for a page's copy: events of some hundred bytes each (the buffer grows past it if need be). */
export const pageRoom = ({ from, to }: PageRange) => Math.min(to - from, 20_000) * 1024

/**
 * The pages of a walk as the threads that check them share them (server/features/audit/audit.verify.worker.ts): each
 * page's range and the checkpoint heads within it, and a counter in shared memory, so that each thread takes the next
 * page not yet taken, in chain order, until none is left or a page was found broken.
 */
export interface PageWork {
  pages: (PageRange & { heads: number[] })[]
  /** [the next page to take, 1 once a page was found broken], over a SharedArrayBuffer */
  control: Int32Array
  linkKey: Uint8Array
  connectionString: string | undefined
  /** how long a thread waits for its connection: the pool's own limit */
  connectTimeoutMs?: number
  /** the walk's snapshot (pg_export_snapshot) */
  snapshot: string
}

/** What a thread sends for each page it checked. */
export interface PageMessage {
  page: number
  result: PageCheck
}

/** The next page to check, or -1 when none is left or a page was found broken. */
export function takePage(work: PageWork): number {
  if (Atomics.load(work.control, 1)) return -1
  const page = Atomics.add(work.control, 0, 1)
  return page < work.pages.length ? page : -1
}

/** No page is taken after this: one was found broken, the walk is made again in one piece. */
export function stopTaking(work: PageWork): void {
  Atomics.store(work.control, 1, 1)
}

/** Each column's place in a row of the copy. */
const F = {
  seq: 0,
  id: 1,
  occurredAt: 2,
  actorId: 3,
  action: 4,
  entityType: 5,
  entityId: 6,
  before: 7,
  after: 8,
  reason: 9,
  batchId: 10,
  requestId: 11,
  ip: 12,
  siteId: 13,
  dataHash: 14,
  prevHash: 15,
  hash: 16,
  link: 17,
}

/** The event in the current row of a copy of `CHAIN_COLUMNS` (audit.copy.ts). */
function chainRow(c: CopyCursor): ChainRow {
  return {
    seq: c.int(F.seq)!,
    id: c.int(F.id)!,
    occurred_ms: c.ms(F.occurredAt),
    actor_id: c.int(F.actorId),
    action: c.text(F.action)!,
    entity_type: c.text(F.entityType)!,
    entity_id: c.text(F.entityId),
    before: c.json(F.before),
    after: c.json(F.after),
    reason: c.text(F.reason),
    batch_id: c.text(F.batchId),
    request_id: c.text(F.requestId),
    ip: c.text(F.ip),
    site_id: c.int(F.siteId),
    data_hash: c.text(F.dataHash),
    prev_hash: c.text(F.prevHash)!,
    hash: c.text(F.hash)!,
    link: c.text(F.link),
  }
}

/**
 * The events of a page of the chain from its binary copy (`CHAIN_COLUMNS`), in the order PostgreSQL sent them, one at
 * a time (an event checked and dropped before the next is read leaves little for the garbage collector): integers from
 * their big-endian bytes, texts as UTF-8, the recorded states as their text (`JsonText`, written canonically from the
 * text by the data hash), the time as milliseconds. Throws on a copy of another shape.
 */
export function* rowsOfCopy(buf: Buffer): Generator<ChainRow> {
  const c = new CopyCursor(buf, CHAIN_FIELDS)
  while (c.next()) yield chainRow(c)
}

/** The recorded values of an event row under their API names (the verifier and the audit-trail list share them). */
export function recordedFields(
  r: Pick<EventRow, 'before' | 'after' | 'reason' | 'batch_id' | 'request_id' | 'ip'>,
): AuditRecorded {
  return { before: r.before, after: r.after, reason: r.reason, batchId: r.batch_id, requestId: r.request_id, ip: r.ip }
}

/** The content of an event as read back, in the form its hashes cover (format 3's data without the site). */
export function contentOf(r: EventRow) {
  const { siteId: _siteId, ...content } = dataOf(r)
  return content
}

/** What the data hash (format 3) covers of an event as read back: its content and site, in one object. */
export function dataOf(r: EventRow): EventData {
  return {
    occurredAt: new Date(r.occurred_ms),
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
    siteId: r.site_id,
  }
}

/** Where the walk stands after an event: its position, id and hash, how many were checked, where keyed links began. */
export interface WalkState {
  lastSeq: number
  lastId: number
  prev: string
  checked: number
  unkeyed: number
  keyedFrom: number | null
}

export const genesisState = (): WalkState => ({
  lastSeq: 0,
  lastId: 0,
  prev: GENESIS_HASH,
  checked: 0,
  unkeyed: 0,
  keyedFrom: null,
})

export interface Problem {
  at: { id?: number; seq?: number }
  problem: string
}

/** What of an event ties it to the one before: its position, its `prev_hash`, whether it is keyed and its format. */
export type ChainLink = Pick<ChainRow, 'id' | 'seq' | 'prev_hash' | 'link' | 'data_hash'>

/**
 * The event's tie to the walk so far: one position after the previous, its hash as `prev_hash`,
 * keyed once links began.
 */
export function linkProblem(r: ChainLink, st: WalkState): Problem | null {
  const { id, seq } = r
  if ((st.keyedFrom !== null || r.data_hash !== null) && seq !== st.lastSeq + 1)
    return {
      at: { id, seq: st.lastSeq + 1 },
      problem:
        `the event at chain position ${st.lastSeq + 1}${seq > st.lastSeq + 2 ? ` (and up to ${seq - 1})` : ''}, ` +
        `before event ${id}, is missing (deleted)`,
    }
  if (r.prev_hash !== st.prev)
    // an event taken out where positions have gaps (before keyed links) shows as a broken link to it
    return {
      at: { id, seq },
      problem:
        'prev_hash does not match the previous event' +
        `${st.keyedFrom === null ? ' (an event before it was changed or deleted)' : ''}`,
    }
  if (r.link === null && (st.keyedFrom !== null || r.data_hash !== null))
    return {
      at: { id, seq },
      problem: 'event has no keyed link although the events before it have: forged or rewritten',
    }
  return null
}

/** The event on its own: its hashes recomputed from its content, its keyed link recomputed with the key. */
export function contentProblem(r: ChainRow, linkOf: (hash: string) => string): Problem | null {
  const { id, seq } = r
  let recomputed: string
  if (r.data_hash !== null) {
    const d = dataHash(dataOf(r))
    recomputed = d === r.data_hash ? sealHash({ id, seq, dataHash: d, prevHash: r.prev_hash }) : ''
  } else
    recomputed = hashEvent({
      ...contentOf(r),
      prevHash: r.prev_hash,
      keyed: r.link === null ? undefined : { id, siteId: r.site_id },
    })
  if (recomputed !== r.hash) return { at: { id, seq }, problem: 'hash does not match content' }
  if (r.link !== null && r.link !== linkOf(r.hash))
    return { at: { id, seq }, problem: 'keyed link does not match: written or rewritten without the audit key' }
  return null
}

/** Moves the walk past an event found intact. */
export function advance(st: WalkState, r: ChainRow): void {
  if (r.link !== null) st.keyedFrom ??= r.seq
  else st.unkeyed++
  st.prev = r.hash
  st.lastSeq = r.seq
  st.lastId = r.id
  st.checked++
}

/**
 * A page of the chain checked on its own, as if the walk before it had ended one position before its first event with
 * that event's `prev_hash` (and no keyed link yet): every check of the walk except the first event's tie to the page
 * before, which `stitchPages` makes. `marks` holds, for each checkpoint head given (within the page's range), the walk
 * after the page's events up to that position (null when the page has none up to it).
 */
export interface PageCheck {
  ok: boolean
  first: ChainLink | null
  end: WalkState | null
  marks: (WalkState | null)[]
}

export function checkPage(rows: Iterable<ChainRow>, heads: number[], linkOf: (hash: string) => string): PageCheck {
  const marks: (WalkState | null)[] = heads.map(() => null)
  let first: ChainLink | null = null
  let st = genesisState()
  let h = 0
  for (const r of rows) {
    if (!first) {
      first = { id: r.id, seq: r.seq, prev_hash: r.prev_hash, link: r.link, data_hash: r.data_hash }
      st = { lastSeq: r.seq - 1, lastId: 0, prev: r.prev_hash, checked: 0, unkeyed: 0, keyedFrom: null }
    }
    for (; h < heads.length && heads[h] < r.seq; h++) marks[h] = st.checked ? { ...st } : null
    if (linkProblem(r, st) ?? contentProblem(r, linkOf)) return { ok: false, first, end: null, marks }
    advance(st, r)
  }
  if (!first) return { ok: true, first: null, end: null, marks }
  for (; h < heads.length; h++) marks[h] = { ...st }
  return { ok: true, first, end: st, marks }
}

/** Where the fields the data hash covers lie in a row of the copy (audit.copy.ts `writeDataText`). */
export const DATA_FIELDS = {
  occurredAt: F.occurredAt,
  actorId: F.actorId,
  action: F.action,
  entityType: F.entityType,
  entityId: F.entityId,
  before: F.before,
  after: F.after,
  reason: F.reason,
  batchId: F.batchId,
  requestId: F.requestId,
  ip: F.ip,
  siteId: F.siteId,
}
const SEAL = {
  dataHash: Buffer.from('{"dataHash":"', 'latin1'),
  id: Buffer.from('","id":', 'latin1'),
  prevHash: Buffer.from(',"prevHash":"', 'latin1'),
  seq: Buffer.from('","seq":', 'latin1'),
  end: Buffer.from(',"v":3}', 'latin1'),
}
// the texts the two hashes of an event cover, written into buffers kept from event to event
const dataBytes = new CanonicalWriter()
const sealBytes = new CanonicalWriter()

/**
 * Whether the sealed (format 3), keyed event in the current row of `c` is intact after the walk `st`, checked on the
 * copy's bytes: one position after the previous event, its `prev_hash` the previous event's hash (the bytes at
 * `prevAt`, or `st.prev` where -1), its data hash and hash recomputed from its columns (audit.copy.ts
 * `writeDataText`, then audit.hash.ts `sealHash`'s text) and its keyed link from its hash. It answers true only where
 * `linkProblem` and `contentProblem` find nothing; false where they find something or must decide (an event of an
 * earlier format, a column of another size), never by itself naming a problem.
 */
function intactInCopy(c: CopyCursor, st: WalkState, prevAt: number, linkOf: LinkHasher): boolean {
  const { len, at, buf } = c
  if (len[F.seq] !== 8 || len[F.id] !== 8 || len[F.dataHash] !== 64 || len[F.prevHash] !== 64) return false
  if (len[F.hash] !== 64 || len[F.link] < 0) return false
  const seq = c.int(F.seq)!
  if (seq !== st.lastSeq + 1) return false
  const prev = at[F.prevHash]
  if (prevAt >= 0) {
    for (let j = 0; j < 64; j++) if (buf[prev + j] !== buf[prevAt + j]) return false
  } else if (!c.asciiEquals(F.prevHash, st.prev)) return false
  dataBytes.pos = 0
  if (!writeDataText(dataBytes, c, DATA_FIELDS)) return false
  const d = hash('sha256', dataBytes.buf.subarray(0, dataBytes.pos), 'hex')
  if (!c.hexEquals(F.dataHash, d)) return false
  const w = sealBytes
  w.pos = 0
  w.bytes(SEAL.dataHash, 0, SEAL.dataHash.length)
  w.ascii(d)
  w.bytes(SEAL.id, 0, SEAL.id.length)
  w.integer(c.int(F.id)!)
  w.bytes(SEAL.prevHash, 0, SEAL.prevHash.length)
  w.bytes(buf, prev, prev + 64) // ASCII: the same bytes as the previous hash, or as st.prev
  w.bytes(SEAL.seq, 0, SEAL.seq.length)
  w.integer(seq)
  w.bytes(SEAL.end, 0, SEAL.end.length)
  const h = hash('sha256', w.buf.subarray(0, w.pos), 'hex')
  return c.hexEquals(F.hash, h) && c.hexEquals(F.link, linkOf(h, true))
}

/**
 * `checkPage` of a page's binary copy (`CHAIN_COLUMNS`), with the same answer: each event checked on the copy's bytes
 * (`intactInCopy`), read into a `ChainRow` and checked by `linkProblem` and `contentProblem` only where those must
 * decide. An intact event's hash is left in the copy, written out as the walk's `prev` only where the walk is kept.
 */
export function checkCopyPage(buf: Buffer, heads: number[], linkOf: LinkHasher): PageCheck {
  const c = new CopyCursor(buf, CHAIN_FIELDS)
  const marks: (WalkState | null)[] = heads.map(() => null)
  let first: ChainLink | null = null
  let st = genesisState()
  let h = 0
  // where the hash of the last event checked lies in the copy while st.prev is not written out (-1: it is)
  let prevAt = -1
  const settled = () => {
    if (prevAt >= 0) st.prev = buf.toString('latin1', prevAt, prevAt + 64)
    prevAt = -1
    return st
  }
  while (c.next()) {
    const seq = c.int(F.seq)!
    if (!first) {
      const r = chainRow(c)
      first = { id: r.id, seq: r.seq, prev_hash: r.prev_hash, link: r.link, data_hash: r.data_hash }
      st = { lastSeq: r.seq - 1, lastId: 0, prev: r.prev_hash, checked: 0, unkeyed: 0, keyedFrom: null }
    }
    for (; h < heads.length && heads[h] < seq; h++) marks[h] = st.checked ? { ...settled() } : null
    if (intactInCopy(c, st, prevAt, linkOf)) {
      st.keyedFrom ??= seq
      st.lastSeq = seq
      st.lastId = c.int(F.id)!
      st.checked++
      prevAt = c.at[F.hash]
      continue
    }
    const r = chainRow(c)
    if (linkProblem(r, settled()) ?? contentProblem(r, linkOf)) return { ok: false, first, end: null, marks }
    advance(st, r)
  }
  if (!first) return { ok: true, first: null, end: null, marks }
  settled()
  for (; h < heads.length; h++) marks[h] = { ...st }
  return { ok: true, first, end: st, marks }
}

/** A signed statement of the chain head at a moment (server/features/audit/audit.checkpoint.ts). */
export interface CheckpointClaim {
  file: string
  headSeq: number
  headHash: string
  count: number
  firstKeyedSeq: number | null
}

/** Whether the walk, just past a checkpoint's head position, agrees with everything the checkpoint signed. */
export function claimHolds(c: CheckpointClaim, st: WalkState): boolean {
  return (
    st.lastSeq === c.headSeq && st.prev === c.headHash && st.checked === c.count && st.keyedFrom === c.firstKeyedSeq
  )
}

/** The walk after `before` and then a page's walk `rel` (counted from the page's start). */
function after(before: WalkState, rel: WalkState): WalkState {
  return {
    lastSeq: rel.lastSeq,
    lastId: rel.lastId,
    prev: rel.prev,
    checked: before.checked + rel.checked,
    unkeyed: before.unkeyed + rel.unkeyed,
    keyedFrom: before.keyedFrom ?? rel.keyedFrom,
  }
}

/**
 * Joins pages checked on their own (`checkPage`, in chain order; `claims[i]` the checkpoints whose head lies in page
 * i's range, in the order their heads were given) into the walk of the whole chain: each page's first event must tie
 * to the end of the page before, exactly as the walk checks it, and each checkpoint must hold where the walk passes
 * its head. Answers the walk's end when the whole chain is intact, null otherwise (the walk in one piece then names
 * the first problem).
 */
export function stitchPages(pages: PageCheck[], claims: CheckpointClaim[][]): WalkState | null {
  let g = genesisState()
  for (let i = 0; i < pages.length; i++) {
    const p = pages[i]
    if (!p.ok) return null
    // past the first event, a page's walk differs from the whole walk only in where keyed links began: the first
    // event, when keyed links began before it, must have one (linkProblem), and then begins them in the page too
    if (p.first && linkProblem(p.first, g)) return null
    for (let k = 0; k < claims[i].length; k++) {
      const m = p.marks[k]
      if (!claimHolds(claims[i][k], m ? after(g, m) : g)) return null
    }
    if (p.end) g = after(g, p.end)
  }
  return g
}

import { createHash } from 'node:crypto'
import canonicalize from 'canonicalize'

/** prev_hash of the first event. */
export const GENESIS_HASH = '0'.repeat(64)

/** The content of an event that its hash covers. */
export interface HashedContent {
  occurredAt: Date
  actorId: number | null
  action: string
  entityType: string
  entityId: string | null
  before: unknown
  after: unknown
  reason: string | null
  batchId: string | null
  requestId: string | null
  ip: string | null
  prevHash: string
  /** Keyed events (format 2) cover their own id and site too; events written before keyed links do not. */
  keyed?: { id: number; siteId: number | null }
}

/**
 * SHA-256 over the RFC 8785 canonical JSON of the event. Times are millisecond ISO strings (the column is
 * timestamptz(3) and the clock gives milliseconds, so what is read back re-hashes identically); undefined maps to null
 * because the jsonb column gives back null.
 */
export function hashEvent(e: HashedContent): string {
  const text = canonicalize({
    v: e.keyed ? 2 : 1,
    ...(e.keyed ? { id: e.keyed.id, siteId: e.keyed.siteId } : {}),
    occurredAt: e.occurredAt.toISOString(),
    actorId: e.actorId,
    action: e.action,
    entityType: e.entityType,
    entityId: e.entityId,
    before: e.before ?? null,
    after: e.after ?? null,
    reason: e.reason,
    batchId: e.batchId,
    requestId: e.requestId,
    ip: e.ip,
    prevHash: e.prevHash,
  })
  if (text === undefined) throw new Error('audit event cannot be canonicalized')
  return createHash('sha256').update(text, 'utf8').digest('hex')
}

/** The content of an event written by the current format (3), hashed when it is written, before it is sealed. */
export interface EventData {
  siteId: number | null
  occurredAt: Date
  actorId: number | null
  action: string
  entityType: string
  entityId: string | null
  before: unknown
  after: unknown
  reason: string | null
  batchId: string | null
  requestId: string | null
  ip: string | null
}

/** `data_hash` (format 3): SHA-256 over the RFC 8785 canonical JSON of the event's content and site. */
export function dataHash(e: EventData): string {
  const text = canonicalize({
    v: 3,
    siteId: e.siteId,
    occurredAt: e.occurredAt.toISOString(),
    actorId: e.actorId,
    action: e.action,
    entityType: e.entityType,
    entityId: e.entityId,
    before: e.before ?? null,
    after: e.after ?? null,
    reason: e.reason,
    batchId: e.batchId,
    requestId: e.requestId,
    ip: e.ip,
  })
  if (text === undefined) throw new Error('audit event cannot be canonicalized')
  return createHash('sha256').update(text, 'utf8').digest('hex')
}

/** What the sealer links (format 3): the event's id, its chain position, its data hash and the previous hash. */
export interface SealedLink {
  id: number
  seq: number
  dataHash: string
  prevHash: string
}

/**
 * `hash` (format 3): SHA-256 over the RFC 8785 canonical JSON of `{ dataHash, id, prevHash, seq, v: 3 }`. The text is
 * written out directly: the keys are in canonical order, the hashes are lowercase hex and the numbers integers, so it
 * is the canonical form (tests/unit/server/audit-hash.test.ts compares it with the canonicalize package).
 */
export function sealHash(s: SealedLink): string {
  const text = `{"dataHash":"${s.dataHash}","id":${s.id},"prevHash":"${s.prevHash}","seq":${s.seq},"v":3}`
  return createHash('sha256').update(text, 'utf8').digest('hex')
}

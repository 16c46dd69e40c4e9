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

import { createHmac, hash } from 'node:crypto'

/** prev_hash of the first event. */
export const GENESIS_HASH = '0'.repeat(64)

/** SHA-256 of a text (UTF-8), as 64 lowercase hex digits; one call, no hash object. */
export function sha256Hex(text: string): string {
  return hash('sha256', text, 'hex')
}

/**
 * RFC 8785 canonical JSON of a value: object members sorted by their names' UTF-16 code units (what Array#sort does
 * with strings), no white space, strings and numbers as ECMAScript's JSON.stringify writes them (RFC 8785 §3.2.2), a
 * member whose value is undefined left out and an undefined array element written as null, a `toJSON` method honoured.
 * NaN and the infinities have no JSON form and throw. tests/unit/server/audit-hash.test.ts compares it with the
 * canonicalize package (the reference implementation RFC 8785 names) over awkward values.
 */
export function canonicalJson(v: unknown): string {
  if (v === null) return 'null'
  switch (typeof v) {
    case 'string':
    case 'boolean':
      return JSON.stringify(v)
    case 'number':
      if (!Number.isFinite(v)) throw new Error(`${v} has no JSON form`)
      return JSON.stringify(v)
    case 'object':
      break
    default:
      // undefined, a function or a symbol at the top (members and elements are handled below)
      return JSON.stringify(v) as string
  }
  const o = v as { toJSON?: unknown }
  if (typeof o.toJSON === 'function') return canonicalJson(o.toJSON())
  if (Array.isArray(v)) {
    let s = '['
    for (let i = 0; i < v.length; i++) {
      const x = v[i]
      s += (i ? ',' : '') + (x === undefined || typeof x === 'symbol' ? 'null' : canonicalJson(x))
    }
    return `${s}]`
  }
  const rec = v as Record<string, unknown>
  const { sorted, names } = shapeOf(Object.keys(rec))
  let s = '{'
  for (let i = 0; i < sorted.length; i++) {
    const x = rec[sorted[i]]
    if (x === undefined || typeof x === 'symbol') continue
    s += (s.length > 1 ? ',' : '') + names[i] + canonicalJson(x)
  }
  return `${s}}`
}

/** An object's member names in canonical order, each written out with its colon. */
interface Shape {
  own: string[]
  sorted: string[]
  names: string[]
}
// Objects of the same shape (the events of one kind) come again and again: their names are sorted and written out once.
const shapes = new Map<string, Shape>()
const MAX_SHAPES = 2000

function shapeOf(own: string[]): Shape {
  const id = own.join('\u0000')
  const hit = shapes.get(id)
  // the joined names could be the same for other names holding the separator: compare them one by one
  if (hit && hit.own.length === own.length && hit.own.every((k, i) => k === own[i])) return hit
  const sorted = [...own].sort()
  const shape = { own, sorted, names: sorted.map((k) => `${JSON.stringify(k)}:`) }
  if (shapes.size < MAX_SHAPES) shapes.set(id, shape)
  return shape
}

/** What every format's hash covers of an event. */
export interface EventContent {
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

/** The content of an event written before the sealer (formats 1 and 2) that its hash covers. */
export interface HashedContent extends EventContent {
  prevHash: string
  /** Keyed events (format 2) cover their own id and site too; events written before keyed links do not. */
  keyed?: { id: number; siteId: number | null }
}

/** The content of an event written by the current format (3), hashed when it is written, before it is sealed. */
export interface EventData extends EventContent {
  siteId: number | null
}

/**
 * The members every format hashes, as JSON values: times are millisecond ISO strings (the column is timestamptz(3)
 * and the clock gives milliseconds, so what is read back re-hashes identically); undefined maps to null because the
 * jsonb column gives back null.
 */
function contentMembers(e: EventContent) {
  return {
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
  }
}

/** The hash of an event written before the sealer: SHA-256 over the RFC 8785 canonical JSON of the event. */
export function hashEvent(e: HashedContent): string {
  return sha256Hex(
    canonicalJson({
      v: e.keyed ? 2 : 1,
      ...(e.keyed ? { id: e.keyed.id, siteId: e.keyed.siteId } : {}),
      ...contentMembers(e),
      prevHash: e.prevHash,
    }),
  )
}

const text = (s: string | null) => (s === null ? 'null' : JSON.stringify(s))
const json = (v: unknown) => (v == null ? 'null' : canonicalJson(v))

/**
 * The canonical JSON `data_hash` covers (format 3): `{ v: 3, siteId, ...contentMembers }`, written out with the
 * members in canonical order (their names are ASCII, sorted here once) so only before and after are sorted per event;
 * the verifier hashes every event with it. tests/unit/server/audit-hash.test.ts compares it with the canonicalize
 * package.
 */
export function dataText(e: EventData): string {
  return (
    `{"action":${JSON.stringify(e.action)},"actorId":${e.actorId === null ? 'null' : canonicalJson(e.actorId)},` +
    `"after":${json(e.after)},"batchId":${text(e.batchId)},"before":${json(e.before)},` +
    `"entityId":${text(e.entityId)},"entityType":${JSON.stringify(e.entityType)},"ip":${text(e.ip)},` +
    `"occurredAt":"${e.occurredAt.toISOString()}","reason":${text(e.reason)},"requestId":${text(e.requestId)},` +
    `"siteId":${e.siteId === null ? 'null' : canonicalJson(e.siteId)},"v":3}`
  )
}

/** `data_hash` (format 3): SHA-256 over the RFC 8785 canonical JSON of the event's content and site. */
export function dataHash(e: EventData): string {
  return sha256Hex(dataText(e))
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
  return sha256Hex(`{"dataHash":"${s.dataHash}","id":${s.id},"prevHash":"${s.prevHash}","seq":${s.seq},"v":3}`)
}

/** The keyed link of an event: HMAC-SHA256 over its hash (which covers its content and the previous hash). */
export function linkOf(sealed: string, key: Buffer): string {
  return createHmac('sha256', key).update(sealed, 'utf8').digest('hex')
}

const HEX64 = /^[0-9a-f]{64}$/

/**
 * `linkOf` with the key fixed, for checking many links: HMAC-SHA256 (RFC 2104) written out as its two SHA-256 over
 * the key's inner and outer pads, so that a link (over a 64-digit hex hash) costs two one-shot hashes into buffers made
 * once, not a new HMAC object. Any other text goes through `linkOf`. tests/unit/server/audit-key.test.ts compares it
 * with Node's HMAC and RFC 4231's test vectors.
 */
export function linkHasher(key: Buffer): (hash: string) => string {
  if (key.length > 64) return (sealed) => linkOf(sealed, key)
  const inner = Buffer.alloc(64 + 64, 0x36)
  const outer = Buffer.alloc(64 + 32, 0x5c)
  for (let i = 0; i < key.length; i++) {
    inner[i] ^= key[i]
    outer[i] ^= key[i]
  }
  return (sealed) => {
    if (!HEX64.test(sealed)) return linkOf(sealed, key)
    inner.write(sealed, 64, 'latin1')
    ;(hash('sha256', inner, 'buffer') as unknown as Buffer).copy(outer, 64)
    return hash('sha256', outer, 'hex')
  }
}

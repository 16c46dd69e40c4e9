import { createHmac, hash } from 'node:crypto'
import type { AuditRecorded } from '../../../shared/schemas/audit.ts'

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
export interface EventContent extends AuditRecorded {
  occurredAt: Date
  actorId: number | null
  action: string
  entityType: string
  entityId: string | null
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
 * recorded-state column gives back null.
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
const json = (v: unknown) => (v == null ? 'null' : v instanceof JsonText ? canonicalText(v.text) : canonicalJson(v))

/**
 * A JSON value as PostgreSQL wrote it (a recorded state read by the chain walk, docs/adr/0003-audit-hash-chain.md,
 * "Verify"), kept as text: the data hash writes its canonical form from the text (`canonicalText`) without building the
 * value. Anything else that serializes it (`canonicalJson`, `JSON.stringify`) sees the parsed value.
 */
export class JsonText {
  constructor(readonly text: string) {}
  toJSON(): unknown {
    return JSON.parse(this.text)
  }
}

// the last shapes of object seen (their member names in the text's order) and the order canonical form writes them in
let lastNames: string[] = []
let lastOrder: number[] = []

/** Index of the quote closing the JSON string opened at `i`, or -1 where the fast path gives up. */
function stringEnd(t: string, i: number): number {
  for (let j = i + 1; j < t.length; j++) {
    const c = t.charCodeAt(j)
    if (c === 34) return j
    // an escape, a raw control character (not JSON) or a surrogate (a lone one is written escaped): the general path
    if (c === 92 || c < 0x20 || (c >= 0xd800 && c <= 0xdfff)) return -1
  }
  return -1
}

const JSON_NUMBER = /^-?(?:0|[1-9][0-9]*)(?:\.[0-9]+)?(?:[eE][+-]?[0-9]+)?$/

/** A JSON number's text as ECMAScript writes the number (RFC 8785 §3.2.2.3); null for any other text or no finite. */
export function ecmaNumber(token: string): string | null {
  if (!JSON_NUMBER.test(token)) return null
  const x = Number(token)
  return Number.isFinite(x) ? JSON.stringify(x) : null
}

/**
 * RFC 8785 canonical JSON of a JSON text: what `canonicalJson(JSON.parse(t))` answers, and throws where it throws.
 * An object whose members are strings without escapes, numbers, true, false or null (the common case: a record's
 * columns), written as jsonb writes it (`{"a": 1, "b": "x"}`) or compactly, is rewritten from its text: members put in
 * canonical order, numbers as ECMAScript writes them; any other text is parsed and written by `canonicalJson`.
 * tests/unit/server/audit-hash.test.ts compares both over generated values.
 */
export function canonicalText(t: string): string {
  return flatCanonical(t) ?? canonicalJson(JSON.parse(t))
}

function flatCanonical(t: string): string | null {
  const n = t.length
  if (t.charCodeAt(0) !== 123 || t.charCodeAt(n - 1) !== 125) return null
  if (n === 2) return '{}'
  const names: string[] = []
  const values: string[] = []
  let i = 1
  for (;;) {
    if (t.charCodeAt(i) !== 34) return null
    const ke = stringEnd(t, i)
    if (ke < 0 || t.charCodeAt(ke + 1) !== 58) return null
    names.push(t.slice(i + 1, ke))
    let v = ke + 2
    if (t.charCodeAt(v) === 32) v++
    const c = t.charCodeAt(v)
    let ve: number // end of the value (exclusive)
    if (c === 34) {
      ve = stringEnd(t, v) + 1
      if (ve === 0) return null
      values.push(t.slice(v, ve))
    } else {
      ve = v
      while (ve < n && t.charCodeAt(ve) !== 44 && t.charCodeAt(ve) !== 125) ve++
      const token = t.slice(v, ve)
      if (token === 'true' || token === 'false' || token === 'null') values.push(token)
      else {
        const x = ecmaNumber(token)
        if (x === null) return null // a nested value, white space, or not JSON
        values.push(x)
      }
    }
    if (ve === n - 1) break
    if (t.charCodeAt(ve) !== 44) return null
    i = t.charCodeAt(ve + 1) === 32 ? ve + 2 : ve + 1
  }
  let order = lastOrder
  if (names.length !== lastNames.length || names.some((k, j) => k !== lastNames[j])) {
    order = names.map((_, j) => j).sort((a, b) => (names[a] < names[b] ? -1 : names[a] > names[b] ? 1 : 0))
    // a name twice: JSON.parse keeps the last, so the general path writes it
    for (let j = 1; j < order.length; j++) if (names[order[j]] === names[order[j - 1]]) return null
    lastNames = names
    lastOrder = order
  }
  let s = '{'
  for (let j = 0; j < order.length; j++) s += `${j ? ',"' : '"'}${names[order[j]]}":${values[order[j]]}`
  return `${s}}`
}

// the minute the last time fell in, and its ISO text up to the seconds
let isoMinute = NaN
let isoPrefix = ''

/**
 * `new Date(ms).toISOString()`, the text of the minute kept for the next call (a chain's events come in time order):
 * what the hashes cover of an event's time. Throws RangeError where toISOString does.
 */
export function isoTime(ms: number): string {
  const t = Math.trunc(ms)
  const minute = t - (((t % 60_000) + 60_000) % 60_000)
  if (minute !== isoMinute) {
    const iso = new Date(minute).toISOString()
    isoPrefix = iso.slice(0, -7) // without "SS.sssZ"
    isoMinute = minute
  }
  const r = t - minute
  const sec = Math.floor(r / 1000)
  const milli = r % 1000
  return `${isoPrefix}${sec < 10 ? '0' : ''}${sec}.${milli < 10 ? '00' : milli < 100 ? '0' : ''}${milli}Z`
}

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
    `"occurredAt":"${isoTime(e.occurredAt.getTime())}","reason":${text(e.reason)},"requestId":${text(e.requestId)},` +
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

/** 64 lowercase hex digits (a loop over the characters costs less than a regular expression here). */
function isHex64(s: string): boolean {
  if (s.length !== 64) return false
  for (let i = 0; i < 64; i++) {
    const c = s.charCodeAt(i)
    if ((c < 48 || c > 57) && (c < 97 || c > 102)) return false
  }
  return true
}

/**
 * The keyed link of a hash; `digest` true says the hash is a SHA-256 digest in hex just computed (so 64 lowercase hex
 * digits, not to be checked again).
 */
export type LinkHasher = (hash: string, digest?: boolean) => string

/**
 * `linkOf` with the key fixed, for checking many links: HMAC-SHA256 (RFC 2104) written out as its two SHA-256 over
 * the key's inner and outer pads, so that a link (over a 64-digit hex hash) costs two one-shot hashes into buffers made
 * once, not a new HMAC object. Any other text goes through `linkOf`. tests/unit/server/audit-key.test.ts compares it
 * with Node's HMAC and RFC 4231's test vectors.
 */
export function linkHasher(key: Buffer): LinkHasher {
  if (key.length > 64) return (sealed) => linkOf(sealed, key)
  const inner = Buffer.alloc(64 + 64, 0x36)
  const outer = Buffer.alloc(64 + 32, 0x5c)
  for (let i = 0; i < key.length; i++) {
    inner[i] ^= key[i]
    outer[i] ^= key[i]
  }
  return (sealed, digest) => {
    if (!digest && !isHex64(sealed)) return linkOf(sealed, key)
    inner.write(sealed, 64, 'latin1')
    // the inner digest as a latin1 ('binary') string, one character a byte, costs less than a new Buffer
    outer.write(hash('sha256', inner, 'binary'), 64, 'latin1')
    return hash('sha256', outer, 'hex')
  }
}

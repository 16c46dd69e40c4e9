import { createHash, createHmac } from 'node:crypto'
import canonicalize from 'canonicalize'
import fc from 'fast-check'
import { describe, expect, it } from 'vitest'
import {
  checkCopyPage,
  checkPage,
  DATA_FIELDS,
  dataOf,
  type PageCheck,
  rowsOfCopy,
} from '../../../server/features/audit/audit.chain.ts'
import { CanonicalWriter, CopyCursor, writeDataText } from '../../../server/features/audit/audit.copy.ts'
import { dataText, linkHasher } from '../../../server/features/audit/audit.hash.ts'
import { jsonbStyle } from './jsonb-style.ts'

// The chain walk checks each event on the bytes of PostgreSQL's binary copy (checkCopyPage) and reads it into values
// only where the general checks (checkPage over rowsOfCopy) must decide. Both must answer alike for every page, intact
// or altered. The pages here are written in the binary copy format of PostgreSQL's manual ("COPY", "Binary Format"),
// their hashes computed with the canonicalize package (the RFC 8785 reference implementation) and Node's SHA-256 and
// HMAC, as docs/adr/0003-audit-hash-chain.md describes format 3.

const KEY = Buffer.from('fernhollow-audit-link-key-for-tests-0123456789abcdef', 'latin1')
const sha256 = (text: string) => createHash('sha256').update(text, 'utf8').digest('hex')
const PG_EPOCH_MS = 946_684_800_000

interface Event {
  occurredMs: number
  actorId: number | null
  action: string
  entityType: string
  entityId: string | null
  before: string | null
  after: string | null
  reason: string | null
  batchId: string | null
  requestId: string | null
  ip: string | null
  siteId: number | null
  /** the type of the state columns: json since migration 2026_12_09_100000, jsonb before it */
  stateType: 'json' | 'jsonb'
}

const int8 = (n: number) => {
  const b = Buffer.alloc(8)
  b.writeBigInt64BE(BigInt(n))
  return b
}
const int4 = (n: number | null) => {
  if (n === null) return null
  const b = Buffer.alloc(4)
  b.writeInt32BE(n)
  return b
}
const text = (s: string | null) => (s === null ? null : Buffer.from(s, 'utf8'))
/** A recorded state as its column sends it: json as its text, jsonb as a version byte (1), then its text. */
const state = (s: string | null, type: Event['stateType']) =>
  s === null ? null : Buffer.concat([Buffer.from(type === 'jsonb' ? [1] : []), Buffer.from(s, 'utf8')])

/** A binary copy of rows of fields (null: NULL): signature, flags, header extension, rows, trailer. */
function binaryCopy(rows: (Buffer | null)[][]): Buffer {
  const parts: Buffer[] = [Buffer.from('PGCOPY\n\xff\r\n\0', 'latin1'), Buffer.alloc(8)]
  for (const row of rows) {
    const count = Buffer.alloc(2)
    count.writeInt16BE(row.length)
    parts.push(count)
    for (const v of row) {
      const len = Buffer.alloc(4)
      len.writeInt32BE(v === null ? -1 : v.length)
      parts.push(len, ...(v === null ? [] : [v]))
    }
  }
  parts.push(Buffer.from([0xff, 0xff]))
  return Buffer.concat(parts)
}

/** The canonical JSON (RFC 8785) of what format 3's data hash covers of an event. */
const canonicalData = (e: Event) =>
  canonicalize({
    v: 3,
    siteId: e.siteId,
    occurredAt: new Date(e.occurredMs).toISOString(),
    actorId: e.actorId,
    action: e.action,
    entityType: e.entityType,
    entityId: e.entityId,
    before: e.before === null ? null : JSON.parse(e.before),
    after: e.after === null ? null : JSON.parse(e.after),
    reason: e.reason,
    batchId: e.batchId,
    requestId: e.requestId,
    ip: e.ip,
  })!

/** The fields of a sealed chain of `events` starting at position `seq0` after `prev`, in CHAIN_COLUMNS order. */
function sealedRows(events: Event[], seq0: number, prev: string): (Buffer | null)[][] {
  return events.map((e, i) => {
    const id = 1000 + seq0 + i
    const seq = seq0 + i
    const dataHash = sha256(canonicalData(e))
    const hash = sha256(canonicalize({ dataHash, id, prevHash: prev, seq, v: 3 })!)
    const link = createHmac('sha256', KEY).update(hash).digest('hex')
    const row = [
      int8(seq),
      int8(id),
      int8((e.occurredMs - PG_EPOCH_MS) * 1000),
      int4(e.actorId),
      text(e.action),
      text(e.entityType),
      text(e.entityId),
      state(e.before, e.stateType),
      state(e.after, e.stateType),
      text(e.reason),
      text(e.batchId),
      text(e.requestId),
      text(e.ip),
      int4(e.siteId),
      text(dataHash),
      text(prev),
      text(hash),
      text(link),
    ]
    prev = hash
    return row
  })
}

/** What a function answers, or the error it throws. */
function outcome<T>(f: () => T): T | string {
  try {
    return f()
  } catch (err) {
    return `throws: ${(err as Error).message}`
  }
}

/**
 * The canonical texts the data hashes cover, written from each row's bytes (null where a row needs the general path):
 * each the same bytes as audit.hash.ts dataText writes for the event as rowsOfCopy reads it (or throwing where it does).
 */
function textsFromBytes(page: Buffer): (string | null)[] {
  const texts: (string | null)[] = []
  const c = new CopyCursor(page, 18)
  const rows = rowsOfCopy(page)
  for (;;) {
    const row = outcome(() => rows.next().value)
    if (typeof row !== 'object' || !c.next()) break
    const w = new CanonicalWriter()
    const fromBytes = outcome(() => (writeDataText(w, c, DATA_FIELDS) ? Buffer.from(w.buf.subarray(0, w.pos)) : null))
    if (fromBytes !== null) {
      const general = outcome(() => Buffer.from(dataText(dataOf(row)), 'utf8'))
      expect(typeof general === 'string' ? general : general.toString('hex')).toBe(
        typeof fromBytes === 'string' ? fromBytes : fromBytes.toString('hex'),
      )
    }
    texts.push(fromBytes === null || typeof fromBytes === 'string' ? null : fromBytes.toString('utf8'))
  }
  return texts
}

/** What checkCopyPage answers, the same as the general checks (checkPage over rowsOfCopy). */
const bothAnswer = (page: Buffer, heads: number[]): PageCheck | string => {
  const link = linkHasher(KEY)
  const general = outcome(() => checkPage(rowsOfCopy(page), heads, link))
  expect(outcome(() => checkCopyPage(page, heads, link))).toEqual(general)
  textsFromBytes(page)
  return general
}

// PostgreSQL keeps UTF-8 only: a lone surrogate has no place in a column
const wellFormed = (s: string) => Buffer.from(s, 'utf8').toString('utf8') === s
const awkwardText = fc.oneof(
  fc.string(),
  fc.string({ unit: 'binary' }).filter(wellFormed),
  fc.constantFrom('', 'limit.update', 'say "hi"', 'back\\slash', 'tab\t', 'Prüfung ✓', '🔥', '\u007f', 'a\u0000b'),
)
const flatValue = fc.oneof(fc.string(), fc.integer(), fc.double({ noNaN: true, noDefaultInfinity: true }), fc.boolean())
const jsonbText = fc.oneof(
  fc.jsonValue().map(jsonbStyle),
  fc.jsonValue().map((v) => JSON.stringify(v)),
  fc.dictionary(fc.string(), flatValue).map(jsonbStyle),
  fc.dictionary(fc.string({ unit: 'binary-ascii' }), flatValue).map(jsonbStyle),
  fc.constantFrom(
    '{}',
    '{"id": 85, "tag": "TZA-85", "status": "active", "deadband": "2", "revision": 149553, "setpoint": "412.5"}',
    '{"a": 1.50, "b": 1e21, "c": 1E-7, "d": -0, "e": 0.1, "f": 12345678901234567890, "g": 1e20, "h": -1}',
    '{"a": true, "b": false, "c": null, "d": "", "e": 0, "f": 123456789012345, "g": 1234567890123456}',
    '{"b": 1, "a": 2, "b": 3}',
    '{"a":1,"b" :2}',
    '{"a": {"y": 1, "x": 2}, "b": [3, 2]}',
    '{"q": "say \\"hi\\"", "u": "\\u0041", "ä": "ü"}',
  ),
)
const event: fc.Arbitrary<Event> = fc.record({
  occurredMs: fc.integer({ min: -62_000_000_000_000, max: 250_000_000_000_000 }),
  actorId: fc.option(fc.integer({ min: -2_147_483_648, max: 2_147_483_647 })),
  action: awkwardText,
  entityType: awkwardText,
  entityId: fc.option(awkwardText),
  before: fc.option(jsonbText),
  after: fc.option(jsonbText),
  reason: fc.option(awkwardText),
  batchId: fc.option(fc.uuid()),
  requestId: fc.option(awkwardText),
  ip: fc.option(fc.oneof(fc.ipV4(), fc.ipV6())),
  siteId: fc.option(fc.integer({ min: -2_147_483_648, max: 2_147_483_647 })),
  stateType: fc.constantFrom('json', 'jsonb'),
})
const prevHash = fc.oneof(fc.constant('0'.repeat(64)), fc.stringMatching(/^[0-9a-f]{64}$/))

describe('the chain walk on the bytes of a binary copy', () => {
  it('an intact page of awkward events: intact, with the walk the general checks give, checkpoints included', () => {
    fc.assert(
      fc.property(
        fc.array(event, { minLength: 1, maxLength: 6 }),
        fc.integer({ min: 1, max: 2 ** 40 }),
        prevHash,
        fc.array(fc.integer({ min: -1, max: 7 })),
        (events, seq0, prev, offsets) => {
          const page = binaryCopy(sealedRows(events, seq0, prev))
          const heads = offsets.map((o) => seq0 + o).sort((a, b) => a - b)
          const r = bothAnswer(page, heads)
          expect(r).toMatchObject({ ok: true, end: { checked: events.length, lastSeq: seq0 + events.length - 1 } })
          // every event's text written from its bytes: what the canonicalize package gives for its content
          expect(textsFromBytes(page)).toEqual(events.map(canonicalData))
        },
      ),
      { numRuns: 300 },
    )
  })

  it('a page with one field of one event changed, cut off or set NULL: what the general checks answer', () => {
    fc.assert(
      fc.property(
        fc.array(event, { minLength: 1, maxLength: 4 }),
        prevHash,
        fc.nat(),
        fc.integer({ min: 0, max: 17 }),
        fc.nat(),
        fc.integer({ min: 0, max: 255 }),
        fc.constantFrom('byte', 'null', 'shorter'),
        (events, prev, which, field, at, byte, how) => {
          const rows = sealedRows(events, 7, prev)
          const row = rows[which % rows.length]
          const v = row[field]
          if (how === 'null' || !v?.length) row[field] = null
          else if (how === 'shorter') row[field] = v.subarray(0, at % v.length)
          else {
            const changed = Buffer.from(v)
            changed[at % v.length] = byte
            if (changed.equals(v)) return
            row[field] = changed
          }
          bothAnswer(binaryCopy(rows), [7, 8])
        },
      ),
      { numRuns: 1000 },
    )
  })

  it('json and jsonb texts that are odd, not JSON or not UTF-8: the same text, or the same error, as the general path', () => {
    const odd = [
      '{"a": 0123}',
      '{"a": 01, "b": 2}',
      '{"a": -01}',
      '{"a": 1,}',
      '{"a": 1 }',
      '{"a" : 1}',
      '{"a": tru}',
      '{"a": nul, "b": 1}',
      '{"a": falsy}',
      '{"a": "x""b": 1}',
      '{"a": "x" "b": 1}',
      '{"a": 1}}',
      '{"a": 1e400}',
      '{"a": 1.}',
      '{"a": .5}',
      '{"a": +1}',
      '{"a": 1234567890123456789}',
      '{"a":}',
      '{"a"}',
      '{"a"x1}',
      '{"a" 1, "b": 2}',
      '{"": 1, "a": 2}',
      '{"a\"b": 1}',
      '{ "a": 1}',
    ]
    const e = { occurredMs: 0, actorId: 1, action: 'a', entityType: 'Limit', entityId: null, reason: null }
    const base: Event = {
      ...e,
      before: null,
      after: null,
      batchId: null,
      requestId: null,
      ip: null,
      siteId: null,
      stateType: 'json',
    }
    const rows = sealedRows([base], 1, '0'.repeat(64))
    const texts = [...odd.map((t) => Buffer.from(t)), Buffer.from('{"a": "\xff", "b": "\xc3"}', 'latin1')]
    // as json (its text) and as jsonb (a version byte, then its text; 2 is a version that does not exist)
    for (const t of texts)
      for (const prefix of [[], [1], [2], [0x1f]]) {
        rows[0][7] = Buffer.concat([Buffer.from(prefix), t])
        bothAnswer(binaryCopy(rows), [])
      }
  })

  it('an altered event: not intact', () => {
    const e: Event = {
      occurredMs: Date.UTC(2026, 11, 4, 15, 29, 12, 854),
      actorId: 3,
      action: 'limit.update',
      entityType: 'Limit',
      entityId: '85',
      before: '{"id": 85, "tag": "TZA-85", "setpoint": "412.5"}',
      after: '{"id": 85, "tag": "TZA-85", "setpoint": "415"}',
      reason: 'benchmark',
      batchId: null,
      requestId: 'bench:bulk',
      ip: null,
      siteId: 1,
      stateType: 'json',
    }
    const rows = sealedRows([e, e, e], 1, '0'.repeat(64))
    expect(bothAnswer(binaryCopy(rows), [])).toMatchObject({ ok: true })
    const changed = sealedRows(
      [e, { ...e, after: '{"id": 85, "tag": "TZA-85", "setpoint": "416"}' }, e],
      1,
      '0'.repeat(64),
    )
    // the second event's content changed, its stored hashes kept
    rows[1][8] = changed[1][8]
    expect(bothAnswer(binaryCopy(rows), [])).toMatchObject({ ok: false })
  })
})

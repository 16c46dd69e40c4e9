import { createHash } from 'node:crypto'
import canonicalize from 'canonicalize'
import fc from 'fast-check'
import { describe, expect, it } from 'vitest'
import {
  canonicalJson,
  canonicalText,
  dataHash,
  dataText,
  isoTime,
  JsonText,
  sealHash,
} from '../../../server/features/audit/audit.hash.ts'
import { jsonbStyle } from './jsonb-style.ts'

// The seal hash of format 3 writes its small object out directly; it must be the RFC 8785 canonical JSON that the
// reference implementation (the canonicalize package, RFC 8785 §3.2) gives, or another verifier would disagree.
const sha256 = (text: string) => createHash('sha256').update(text, 'utf8').digest('hex')

describe('format-3 hashes', () => {
  it('seal hash: SHA-256 of the RFC 8785 canonical JSON of { dataHash, id, prevHash, seq, v: 3 }', () => {
    const cases = [
      { id: 1, seq: 1, dataHash: 'ab'.repeat(32), prevHash: '0'.repeat(64) },
      { id: 9_007_199_254_740_991, seq: 123_456_789, dataHash: 'f'.repeat(64), prevHash: '0123456789abcdef'.repeat(4) },
    ]
    for (const c of cases)
      expect(sealHash(c)).toBe(
        sha256(canonicalize({ v: 3, seq: c.seq, prevHash: c.prevHash, id: c.id, dataHash: c.dataHash })!),
      )
    // the helper itself: SHA-256 of the empty string, the well-known digest (value from memory)
    expect(sha256('')).toBe('e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855')
  })

  it('data hash: SHA-256 of the canonical JSON of the content and site, with v: 3 and the time in ISO form', () => {
    const e = {
      siteId: 2,
      occurredAt: new Date('2026-12-03T08:00:00.123Z'),
      actorId: 7,
      action: 'limit.update',
      entityType: 'Limit',
      entityId: '42',
      before: { setpoint: '412.5', b: [1, { z: 1, a: 2 }] },
      after: null,
      reason: 'Grund ✓',
      batchId: null,
      requestId: 'req-1',
      ip: '127.0.0.1',
    }
    // written out by hand in canonical order (RFC 8785 §3.2.3: keys sorted by UTF-16 code units)
    const text =
      '{"action":"limit.update","actorId":7,"after":null,"batchId":null,"before":{"b":[1,{"a":2,"z":1}],"setpoint":"412.5"},' +
      '"entityId":"42","entityType":"Limit","ip":"127.0.0.1","occurredAt":"2026-12-03T08:00:00.123Z","reason":"Grund ✓",' +
      '"requestId":"req-1","siteId":2,"v":3}'
    expect(dataHash(e)).toBe(sha256(text))
  })

  it('canonical JSON: what the canonicalize package (the RFC 8785 reference implementation) gives, for awkward values', () => {
    const when = new Date('2026-01-02T03:04:05.006Z')
    const values: unknown[] = [
      null,
      true,
      0,
      -0,
      1e21,
      1e-7,
      0.1 + 0.2,
      2 ** 53 + 2,
      1.7976931348623157e308,
      5e-324,
      -123.456e-10,
      '',
      'Ölstand ≥ 95 % 🔥 \u2028 "quoted" \\ back\\slash \t tab \u0001 \u007f',
      [],
      {},
      [undefined, null, 1, [2, [3]]],
      { b: 1, a: { d: [], c: {} }, undefinedMember: undefined },
      // member names sorted by UTF-16 code units (RFC 8785 §3.2.3): digits, capitals, ä, astral characters
      { 10: 'ten', 9: 'nine', Z: 1, a: 2, ä: 3, '': 4, '🔥': 5, '\uffff': 6, 'e\u0301': 7, é: 8 },
      { when, nested: [{ when }] },
    ]
    for (const v of values) expect(canonicalJson(v)).toBe(canonicalize(v))
    // RFC 8785 §3.2.2.3: numbers have no JSON form beyond the finite ones
    expect(() => canonicalJson(NaN)).toThrow()
    expect(() => canonicalJson({ a: Infinity })).toThrow()
  })

  it('data text: what the canonicalize package gives for { v: 3, siteId, ...content }, for awkward content', () => {
    const contents = [
      {
        siteId: null,
        occurredAt: new Date('2026-03-04T05:06:07.999Z'),
        actorId: null,
        action: 'test.awkward "quoted"',
        entityType: 'Limit',
        entityId: 'TZ-101/A',
        before: [{ zeta: 1, alpha: { delta: [3, { z: 1, ä: 'ü', '': 'empty key' }] } }],
        after: { n: -0.000001, 10: 'ten', 9: 'nine' },
        reason: 'Grund: Prüfung ✓\n',
        batchId: '6f1c1f0e-8d5b-4c8e-9d0a-3b2f5f1e2a77',
        requestId: 'req-ä-🔥',
        ip: '2001:db8::1',
      },
      {
        siteId: 12,
        occurredAt: new Date('2026-12-03T00:00:00.000Z'),
        actorId: 2147483647,
        action: 'limit.update',
        entityType: 'System',
        entityId: null,
        before: null,
        after: 'text',
        reason: null,
        batchId: null,
        requestId: null,
        ip: null,
      },
    ]
    for (const e of contents) {
      const { occurredAt, ...rest } = e
      expect(dataText(e)).toBe(canonicalize({ v: 3, ...rest, occurredAt: occurredAt.toISOString() }))
    }
  })

  it('canonical JSON from a JSON text, as jsonb writes it or compactly: what the canonicalize package gives', () => {
    const same = (text: string) => expect(canonicalText(text)).toBe(canonicalize(JSON.parse(text)))
    const awkward = [
      '{}',
      'null',
      '"text"',
      '[1, {"b": 2, "a": 1}]',
      '{"id": 85, "tag": "TZA-85", "status": "active", "deadband": "2", "revision": 149553, "setpoint": "412.5"}',
      '{"a": 1.50, "b": 1e21, "c": 1E-7, "d": -0, "e": 0.1, "f": 12345678901234567890}',
      '{"a": true, "b": false, "c": null, "d": ""}',
      '{"q": "say \\"hi\\"", "t": "tab\\t", "u": "\\u0041\\u00e9", "s": "\\/"}',
      '{"ä": 1, "z": 2, "🔥": 3, "\uffff": 4, "é": 5, "10": 6, "9": 7}',
      '{"a": {"y": 1, "x": 2}, "b": [3, 2]}',
      '{"a": 1, "a": 2}',
      '{"a":1,"b" :2}',
      '{"a":1 , "b":2}',
      '{"b":"x","a":[]}',
    ]
    for (const text of awkward) same(text)
    // the same member names come object after object: the order kept from one must not carry over to another
    same('{"b": 1, "a": 2}')
    same('{"b": 1, "c": 2}')
    same('{"b": 1, "a": 2}')
    fc.assert(
      fc.property(fc.jsonValue(), (v) => {
        same(jsonbStyle(v))
        same(JSON.stringify(v))
      }),
      { numRuns: 500 },
    )
    fc.assert(
      fc.property(fc.dictionary(fc.string(), fc.oneof(fc.string(), fc.double(), fc.integer(), fc.boolean())), (o) => {
        if (Object.values(o).some((x) => typeof x === 'number' && !Number.isFinite(x))) return
        same(jsonbStyle(o))
      }),
      { numRuns: 500 },
    )
    expect(() => canonicalText('{"a": 1')).toThrow()
  })

  it('data text of an event read as jsonb text: the same as of its parsed values', () => {
    const e = {
      siteId: 3,
      occurredAt: new Date('2026-12-04T15:29:12.854Z'),
      actorId: null,
      action: 'limit.update',
      entityType: 'Limit',
      entityId: '85',
      reason: 'benchmark',
      batchId: null,
      requestId: 'bench:bulk',
      ip: null,
    }
    const before = '{"id": 85, "tag": "TZA-85", "setpoint": "412.5", "n": [1, {"b": 2, "a": 1}]}'
    const after = '{"id": 85, "tag": "TZA-85", "setpoint": "415"}'
    expect(dataText({ ...e, before: new JsonText(before), after: new JsonText(after) })).toBe(
      canonicalize({
        v: 3,
        ...e,
        occurredAt: e.occurredAt.toISOString(),
        before: JSON.parse(before),
        after: JSON.parse(after),
      }),
    )
  })

  it('ISO time from milliseconds: what Date#toISOString writes, in any minute, year or order', () => {
    const times = [
      0, 1, -1, 999, 59_999, 60_000, -60_000, -60_001, 1_764_862_152_854, 1_764_862_152_854.7, 253_402_300_799_999,
      253_402_300_800_000, -62_167_219_200_001, 8.64e15, -8.64e15,
    ]
    // 8.64e15 ms either side of 1970 is as far as a Date goes (ECMA-262, "Time Values and Time Range")
    const valid = [...times, ...times.map((t) => t + 1), ...[...times].reverse()].filter((t) => Math.abs(t) <= 8.64e15)
    for (const ms of valid) expect(isoTime(ms)).toBe(new Date(ms).toISOString())
    fc.assert(
      fc.property(fc.integer({ min: -8.64e15, max: 8.64e15 }), (ms) => {
        expect(isoTime(ms)).toBe(new Date(ms).toISOString())
      }),
    )
    expect(() => isoTime(NaN)).toThrow(RangeError)
  })
})

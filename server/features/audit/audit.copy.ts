import { canonicalText, ecmaNumber, isoTime, JsonText } from './audit.hash.ts'

// Reading a page of the chain from PostgreSQL's binary copy (its manual, "COPY", "Binary Format"): a signature, flags,
// a header extension, then per row a 16-bit field count and per field a 32-bit length (-1: NULL) and the value; a
// count of -1 ends it. The chain walk reads each event's fields where they lie in the bytes and writes the canonical
// text its data hash covers straight from them (docs/adr/0003-audit-hash-chain.md, "Verify").

const COPY_SIGNATURE = Buffer.from('PGCOPY\n\xff\r\n\0', 'latin1')
/** 2000-01-01T00:00:00Z in Unix milliseconds: binary timestamps count microseconds from it. */
const PG_EPOCH_MS = 946_684_800_000
/** The greatest time a Date holds, either side of 1970 (ECMA-262, "Time Values and Time Range"). */
const MAX_TIME_MS = 8.64e15

/** A cursor over the rows of a binary copy: `next()` finds each field of the next row, the readers decode one. */
export class CopyCursor {
  /** where each field's value begins in `buf`, and its length (-1 for NULL) */
  readonly at: Int32Array
  readonly len: Int32Array
  /** the first byte of the current row and the first byte after it */
  start = 0
  end = 0

  constructor(
    readonly buf: Buffer,
    readonly fields: number,
  ) {
    if (buf.length < 19 || !buf.subarray(0, 11).equals(COPY_SIGNATURE)) throw new Error('not a binary copy')
    this.at = new Int32Array(fields)
    this.len = new Int32Array(fields)
    this.end = 19 + buf.readInt32BE(15) // past the header extension
  }

  /** Moves to the next row; false at the copy's end. Throws on a row of another shape or cut off. */
  next(): boolean {
    const b = this.buf
    let p = this.end
    if (p + 2 > b.length) throw new Error('a binary copy cut off')
    const count = ((b[p] << 24) >> 16) | b[p + 1]
    p += 2
    if (count === -1) return false
    if (count !== this.fields) throw new Error(`a row of ${count} fields`)
    this.start = p - 2
    for (let i = 0; i < count; i++) {
      if (p + 4 > b.length) throw new Error('a binary copy cut off')
      const n = (b[p] << 24) | (b[p + 1] << 16) | (b[p + 2] << 8) | b[p + 3]
      p += 4
      this.at[i] = p
      this.len[i] = n
      if (n > 0) p += n
    }
    if (p > b.length) throw new Error('a binary copy cut off')
    this.end = p
    return true
  }

  /** An integer field (int4 or int8) as a number; NaN for another length. */
  int(i: number): number | null {
    const n = this.len[i]
    if (n < 0) return null
    const b = this.buf
    const p = this.at[i]
    return n === 4 ? b.readInt32BE(p) : n === 8 ? b.readInt32BE(p) * 4294967296 + b.readUInt32BE(p + 4) : NaN
  }

  /** A text field as UTF-8. */
  text(i: number): string | null {
    const n = this.len[i]
    return n < 0 ? null : this.buf.toString('utf8', this.at[i], this.at[i] + n)
  }

  /**
   * A json or jsonb field as its text: json's binary form is its text, jsonb's a version byte (1), then its text (no
   * JSON text begins with that byte).
   */
  json(i: number): JsonText | null {
    const n = this.len[i]
    if (n < 0) return null
    const skip = jsonTextStart(this.buf, this.at[i], n)
    if (skip < 0) throw new Error('unknown jsonb format')
    return new JsonText(this.buf.toString('utf8', this.at[i] + skip, this.at[i] + n))
  }

  /** A timestamptz field as Unix milliseconds (rounded from its microseconds). */
  ms(i: number): number {
    return Math.round((this.int(i) as number) / 1000) + PG_EPOCH_MS
  }

  /** Whether a field holds exactly the characters of `s`, each below 0x80 (so as UTF-8 too). */
  asciiEquals(i: number, s: string): boolean {
    if (this.len[i] !== s.length) return false
    const b = this.buf
    const p = this.at[i]
    for (let j = 0; j < s.length; j++) if (b[p + j] !== s.charCodeAt(j) || b[p + j] > 0x7f) return false
    return true
  }

  /** `asciiEquals` for a text known to be ASCII (a hash in hex), compared by the engine at once. */
  hexEquals(i: number, hex: string): boolean {
    return this.len[i] === hex.length && this.buf.toString('latin1', this.at[i], this.at[i] + hex.length) === hex
  }
}

const ascii = (s: string) => Buffer.from(s, 'latin1')

/**
 * Where the text of a json or jsonb field of `n` bytes at `from` begins: 0 for json, 1 past jsonb's version byte; -1
 * for an empty field or a jsonb of another version (no JSON text begins with a byte below 0x20 but white space).
 */
function jsonTextStart(buf: Uint8Array, from: number, n: number): number {
  if (n < 1) return -1
  const b = buf[from]
  return b === 1 ? 1 : b >= 0x20 || b === 0x09 || b === 0x0a || b === 0x0d ? 0 : -1
}

/**
 * Canonical JSON text written into one buffer, reused from event to event: bytes of the copy as they are where their
 * canonical form is the same bytes, anything else through the functions of audit.hash.ts as UTF-8.
 */
export class CanonicalWriter {
  buf = Buffer.alloc(64 * 1024)
  pos = 0

  /** Makes room for `n` more bytes. */
  room(n: number): void {
    if (this.pos + n <= this.buf.length) return
    const bigger = Buffer.alloc(Math.max(2 * this.buf.length, this.pos + n))
    this.buf.copy(bigger, 0, 0, this.pos)
    this.buf = bigger
  }

  /** Bytes as they are. */
  bytes(src: Uint8Array, from: number, to: number): void {
    this.room(to - from)
    const out = this.buf
    let p = this.pos
    if (to - from > 48) {
      out.set(src.subarray(from, to), p)
      p += to - from
    } else for (let j = from; j < to; j++) out[p++] = src[j]
    this.pos = p
  }

  /** One byte. */
  byte(c: number): void {
    this.room(1)
    this.buf[this.pos++] = c
  }

  /** A text of ASCII characters (a long one written by the engine at once). */
  ascii(s: string): void {
    this.room(s.length)
    if (s.length > 16) {
      this.pos += this.buf.write(s, this.pos, 'latin1')
      return
    }
    const out = this.buf
    let p = this.pos
    for (let j = 0; j < s.length; j++) out[p++] = s.charCodeAt(j)
    this.pos = p
  }

  /** An integer as `String(n)` writes it: a safe one digit by digit, no text made; any other through `String`. */
  integer(n: number): void {
    if (!Number.isSafeInteger(n)) return this.ascii(String(n))
    this.room(17)
    if (n < 0) {
      this.buf[this.pos++] = 0x2d
      n = -n
    }
    let digits = 1
    for (let x = n; x >= 10; x = Math.floor(x / 10)) digits++
    const out = this.buf
    let p = (this.pos += digits)
    do {
      out[--p] = 0x30 + (n % 10)
      n = Math.floor(n / 10)
    } while (n > 0)
  }

  /** Any text, as UTF-8. */
  utf8(s: string): void {
    this.room(Buffer.byteLength(s))
    this.pos += this.buf.write(s, this.pos, 'utf8')
  }
}

/** Whether `src[from, to)` is printable ASCII without a quote or a backslash: what JSON.stringify writes as it is. */
function plainAscii(src: Uint8Array, from: number, to: number): boolean {
  for (let j = from; j < to; j++) {
    const c = src[j]
    if (c < 0x20 || c > 0x7f || c === 0x22 || c === 0x5c) return false
  }
  return true
}

/** `JSON.stringify` of a text field (`null` for NULL), written from its bytes. */
function writeTextField(w: CanonicalWriter, c: CopyCursor, i: number): void {
  const n = c.len[i]
  if (n < 0) return w.ascii('null')
  const from = c.at[i]
  if (plainAscii(c.buf, from, from + n)) {
    w.byte(0x22)
    w.bytes(c.buf, from, from + n)
    w.byte(0x22)
  } else w.utf8(JSON.stringify(c.buf.toString('utf8', from, from + n)))
}

/** An int4 field as canonical JSON (`null` for NULL); false for another length (the general path decides). */
function writeIntField(w: CanonicalWriter, c: CopyCursor, i: number): boolean {
  const n = c.len[i]
  if (n < 0) w.ascii('null')
  else if (n === 4) w.integer(c.buf.readInt32BE(c.at[i]))
  else return false
  return true
}

/** An integer without leading zeros of at most 15 digits (below 2^53): its ECMAScript form is its text. */
function plainInteger(src: Uint8Array, from: number, to: number): boolean {
  const j0 = src[from] === 0x2d ? from + 1 : from
  if (to - from === 1 && src[from] === 0x30) return true
  if (to - j0 < 1 || to - j0 > 15 || src[j0] < 0x31 || src[j0] > 0x39) return false
  for (let j = j0 + 1; j < to; j++) if (src[j] < 0x30 || src[j] > 0x39) return false
  return true
}

const TRUE = ascii('true')
const FALSE = ascii('false')
const NULL = ascii('null')

/** Whether `src[from, to)` is the word `w`. */
function isWord(src: Uint8Array, from: number, to: number, w: Buffer): boolean {
  if (to - from !== w.length) return false
  for (let j = 0; j < w.length; j++) if (src[from + j] !== w[j]) return false
  return true
}

const latin1 = (src: Uint8Array, from: number, to: number) =>
  Buffer.from(src.buffer, src.byteOffset + from, to - from).toString('latin1')

// the member names of the last object written (one after another in `lastNames`, the k-th ending at `lastNameEnds[k]`)
// and the order canonical form writes its members in
let lastNames = Buffer.alloc(0)
let lastNameEnds: number[] = []
let lastOrder: number[] = []
// where the current object's names and values lie, and a number's ECMAScript form where it is not its text
const nameAt: number[] = []
const nameEnd: number[] = []
const valueAt: number[] = []
const valueEnd: number[] = []
const numberText: (string | null)[] = []

/** Whether the object's names (`count` of them) are those of the last object, in the same order. */
function sameNames(src: Uint8Array, count: number): boolean {
  if (count !== lastNameEnds.length) return false
  let q = 0
  for (let k = 0; k < count; k++) {
    const n = nameEnd[k] - nameAt[k]
    if (lastNameEnds[k] - q !== n) return false
    for (let j = 0; j < n; j++) if (src[nameAt[k] + j] !== lastNames[q + j]) return false
    q += n
  }
  return true
}

/** The end (exclusive) of a string's content of printable ASCII without a backslash from `i` on, or -1. */
function plainStringEnd(src: Uint8Array, i: number, last: number): number {
  for (let j = i; j < last; j++) {
    const c = src[j]
    if (c === 0x22) return j
    if (c < 0x20 || c > 0x7f || c === 0x5c) return -1
  }
  return -1
}

/**
 * The canonical form of a recorded state's JSON text `src[from, to)` written from its bytes, as audit.hash.ts
 * `flatCanonical` writes it from the text: an object of ASCII names, strings of printable ASCII without escapes,
 * numbers, true, false and null (`{"a": 1, "b": "x"}` or compact); members in canonical order (for ASCII names, byte
 * order), integers of up to 15 digits as they are, other numbers as ECMAScript writes them (`ecmaNumber`). False,
 * having written nothing, for any other text.
 */
function writeFlatObject(w: CanonicalWriter, src: Uint8Array, from: number, to: number): boolean {
  if (to - from < 2 || src[from] !== 0x7b || src[to - 1] !== 0x7d) return false
  if (to - from === 2) {
    w.ascii('{}')
    return true
  }
  const last = to - 1
  let count = 0
  let i = from + 1
  for (;;) {
    if (src[i] !== 0x22) return false
    const ke = plainStringEnd(src, i + 1, last)
    if (ke < 0 || src[ke + 1] !== 0x3a) return false
    nameAt[count] = i + 1
    nameEnd[count] = ke
    let v = ke + 2
    if (src[v] === 0x20) v++
    let ve: number
    numberText[count] = null
    if (src[v] === 0x22) {
      ve = plainStringEnd(src, v + 1, last) + 1
      if (ve === 0) return false
    } else {
      ve = v
      while (ve < last && src[ve] !== 0x2c) ve++
      if (!isWord(src, v, ve, TRUE) && !isWord(src, v, ve, FALSE) && !isWord(src, v, ve, NULL)) {
        if (!plainInteger(src, v, ve)) {
          if (!plainAscii(src, v, ve)) return false
          const x = ecmaNumber(latin1(src, v, ve))
          if (x === null) return false // a nested value, white space, or not JSON
          numberText[count] = x
        }
      }
    }
    valueAt[count] = v
    valueEnd[count] = ve
    count++
    if (ve === last) break
    if (src[ve] !== 0x2c) return false
    i = src[ve + 1] === 0x20 ? ve + 2 : ve + 1
  }
  if (!sameNames(src, count)) {
    const names = Array.from({ length: count }, (_, k) => latin1(src, nameAt[k], nameEnd[k]))
    const order = names.map((_, k) => k).sort((a, b) => (names[a] < names[b] ? -1 : names[a] > names[b] ? 1 : 0))
    // a name twice: JSON.parse keeps the last, so the general path writes it
    for (let k = 1; k < count; k++) if (names[order[k]] === names[order[k - 1]]) return false
    lastNames = Buffer.from(names.join(''), 'latin1')
    lastNameEnds = []
    let q = 0
    for (const n of names) lastNameEnds.push((q += n.length))
    lastOrder = order
  }
  // `{`, `}`, and per member `"name":value` and a comma, written byte by byte into room made once
  let size = 1
  for (let k = 0; k < count; k++)
    size += nameEnd[k] - nameAt[k] + 4 + (numberText[k]?.length ?? valueEnd[k] - valueAt[k])
  w.room(size)
  const out = w.buf
  let p = w.pos
  out[p++] = 0x7b
  for (let k = 0; k < count; k++) {
    const m = lastOrder[k]
    if (k) out[p++] = 0x2c
    out[p++] = 0x22
    for (let j = nameAt[m]; j < nameEnd[m]; j++) out[p++] = src[j]
    out[p++] = 0x22
    out[p++] = 0x3a
    const x = numberText[m]
    if (x === null) for (let j = valueAt[m]; j < valueEnd[m]; j++) out[p++] = src[j]
    else for (let j = 0; j < x.length; j++) out[p++] = x.charCodeAt(j)
  }
  out[p++] = 0x7d
  w.pos = p
  return true
}

/** A json or jsonb field in canonical form (`null` for NULL); false for a jsonb of another version (general path). */
function writeJsonField(w: CanonicalWriter, c: CopyCursor, i: number): boolean {
  const n = c.len[i]
  if (n < 0) {
    w.ascii('null')
    return true
  }
  const skip = jsonTextStart(c.buf, c.at[i], n)
  if (skip < 0) return false
  const from = c.at[i] + skip
  const to = c.at[i] + n
  if (!writeFlatObject(w, c.buf, from, to)) w.utf8(canonicalText(c.buf.toString('utf8', from, to)))
  return true
}

// the minute the last time fell in, and its ISO text up to the seconds (audit.hash.ts `isoTime`'s)
let isoMinute = NaN
let isoPrefix = Buffer.alloc(0)

/** audit.hash.ts `isoTime(ms)` of a time in a Date's range, written byte by byte, the text of its minute kept. */
function writeIsoTime(w: CanonicalWriter, ms: number): void {
  const t = Math.trunc(ms)
  const minute = t - (((t % 60_000) + 60_000) % 60_000)
  if (minute !== isoMinute) {
    isoPrefix = Buffer.from(isoTime(minute).slice(0, -7), 'latin1') // without "SS.sssZ"
    isoMinute = minute
  }
  const r = t - minute
  const sec = Math.floor(r / 1000)
  const milli = r % 1000
  w.room(isoPrefix.length + 7)
  const out = w.buf
  let p = w.pos
  for (let j = 0; j < isoPrefix.length; j++) out[p++] = isoPrefix[j]
  out[p++] = 0x30 + Math.floor(sec / 10)
  out[p++] = 0x30 + (sec % 10)
  out[p++] = 0x2e
  out[p++] = 0x30 + Math.floor(milli / 100)
  out[p++] = 0x30 + (Math.floor(milli / 10) % 10)
  out[p++] = 0x30 + (milli % 10)
  out[p++] = 0x5a
  w.pos = p
}

/** Where the fields of a sealed event that its data hash covers lie in a row of the copy. */
export interface DataFields {
  occurredAt: number
  actorId: number
  action: number
  entityType: number
  entityId: number
  before: number
  after: number
  reason: number
  batchId: number
  requestId: number
  ip: number
  siteId: number
}

const NAMES = {
  action: ascii('{"action":'),
  actorId: ascii(',"actorId":'),
  after: ascii(',"after":'),
  batchId: ascii(',"batchId":'),
  before: ascii(',"before":'),
  entityId: ascii(',"entityId":'),
  entityType: ascii(',"entityType":'),
  ip: ascii(',"ip":'),
  occurredAt: ascii(',"occurredAt":"'),
  reason: ascii('","reason":'),
  requestId: ascii(',"requestId":'),
  siteId: ascii(',"siteId":'),
  end: ascii(',"v":3}'),
}
const put = (w: CanonicalWriter, b: Buffer) => w.bytes(b, 0, b.length)

/**
 * audit.hash.ts `dataText` of the event in the current row of `c` (as `rowsOfCopy` reads it), written into `w` from
 * its bytes. False where the row needs the general path (an integer or time of another size, a time out of a Date's
 * range, a jsonb of another format, a NULL where the column admits none); what was written is then to be dropped.
 */
export function writeDataText(w: CanonicalWriter, c: CopyCursor, f: DataFields): boolean {
  if (c.len[f.action] < 0 || c.len[f.entityType] < 0 || c.len[f.occurredAt] !== 8) return false
  const ms = c.ms(f.occurredAt)
  if (!(Math.abs(ms) <= MAX_TIME_MS)) return false
  put(w, NAMES.action)
  writeTextField(w, c, f.action)
  put(w, NAMES.actorId)
  if (!writeIntField(w, c, f.actorId)) return false
  put(w, NAMES.after)
  if (!writeJsonField(w, c, f.after)) return false
  put(w, NAMES.batchId)
  writeTextField(w, c, f.batchId)
  put(w, NAMES.before)
  if (!writeJsonField(w, c, f.before)) return false
  put(w, NAMES.entityId)
  writeTextField(w, c, f.entityId)
  put(w, NAMES.entityType)
  writeTextField(w, c, f.entityType)
  put(w, NAMES.ip)
  writeTextField(w, c, f.ip)
  put(w, NAMES.occurredAt)
  writeIsoTime(w, ms)
  put(w, NAMES.reason)
  writeTextField(w, c, f.reason)
  put(w, NAMES.requestId)
  writeTextField(w, c, f.requestId)
  put(w, NAMES.siteId)
  if (!writeIntField(w, c, f.siteId)) return false
  put(w, NAMES.end)
  return true
}

import { createReadStream } from 'node:fs'
import { open } from 'node:fs/promises'
import Papa from 'papaparse'
import ExcelJS from 'exceljs'
import {
  badFile,
  cellText,
  guessDelimiter,
  norm,
  OLE2_SIGNATURE,
  unpackedSize,
  ZIP_SIGNATURE,
} from '../register/imports.service.ts'

// Streamed reading of large uploaded files (alarm journals, process-data exports): rows come one at a time from
// disk, so a file is never held in memory. The checks on the file's kind and the CSV delimiter are the register
// import's (docs/alarms.md, "Files").

export type FileKind = 'csv' | 'xlsx'

/** Looks at the first bytes: XLSX (ZIP) or UTF-8 text; anything else is refused with a sentence for the user. */
export async function sniffFile(path: string): Promise<{ kind: FileKind; delimiter: string }> {
  const fh = await open(path, 'r')
  try {
    const buf = Buffer.alloc(64 * 1024)
    const { bytesRead } = await fh.read(buf, 0, buf.length, 0)
    const head = buf.subarray(0, bytesRead)
    if (bytesRead === 0) throw badFile('The file is empty')
    if (head.subarray(0, 4).equals(ZIP_SIGNATURE)) return { kind: 'xlsx', delimiter: ',' }
    if (head.subarray(0, 4).equals(OLE2_SIGNATURE))
      throw badFile('This is an old Excel (.xls) workbook: save it as .xlsx or as CSV (UTF-8) and upload it again')
    // the last character may be cut in the middle: decode only up to the last line break
    const cut = head.lastIndexOf(0x0a)
    let text: string
    try {
      text = new TextDecoder('utf-8', { fatal: true }).decode(
        cut > 0 && bytesRead === buf.length ? head.subarray(0, cut) : head,
      )
    } catch {
      throw badFile('The file is neither an XLSX workbook nor CSV text in UTF-8: save the CSV as UTF-8')
    }
    for (let i = 0; i < text.length; i++) {
      const c = text.charCodeAt(i)
      if (c < 0x20 && c !== 0x09 && c !== 0x0a && c !== 0x0d)
        throw badFile('The file holds binary data, not CSV text: upload a .csv or .xlsx file')
    }
    return { kind: 'csv', delimiter: guessDelimiter(text.replace(/^\uFEFF/, '')) }
  } finally {
    await fh.close()
  }
}

const XLSX_MAX_UNPACKED_BYTES = 4 * 1024 * 1024 * 1024

/**
 * CSV rows through papaparse's streaming parser (as the register import reads CSV), one parsed chunk at a time: the
 * parser is paused until the consumer has taken the chunk, so memory holds about one chunk.
 */
async function* readCsvRows(path: string, delimiter: string): AsyncGenerator<string[]> {
  const queue: string[][][] = []
  let finished = false
  let failure: Error | null = null
  let parser: Papa.Parser | null = null
  let wake: (() => void) | null = null
  const signal = () => {
    wake?.()
    wake = null
  }
  Papa.parse<string[]>(createReadStream(path, { highWaterMark: 1024 * 1024 }), {
    delimiter,
    skipEmptyLines: 'greedy',
    chunk: (r, p) => {
      parser = p
      const quote = r.errors.find((e) => e.type === 'Quotes')
      if (quote && !failure)
        failure = badFile(
          `The CSV cannot be read: ${quote.message}. A text cell holding the delimiter needs double quotes`,
        )
      queue.push(r.data)
      p.pause()
      signal()
    },
    complete: () => {
      finished = true
      signal()
    },
    error: (err: Error) => {
      failure = badFile(`The CSV cannot be read: ${err.message}`)
      signal()
    },
  })
  let first = true
  for (;;) {
    if (failure) throw failure
    const rows = queue.shift()
    if (rows) {
      for (const row of rows) {
        if (first) {
          if (row[0]) row[0] = row[0].replace(/^\uFEFF/, '')
          first = false
        }
        for (let i = 0; i < row.length; i++) row[i] = row[i].trim()
        yield row
      }
      if (failure) throw failure
      ;(parser as Papa.Parser | null)?.resume()
      continue
    }
    if (finished) return
    await new Promise<void>((resolve) => (wake = resolve))
  }
}

/** Rows of the file (header first) as arrays of trimmed strings; a CSV quoting error stops with a clear 400. */
export async function* readRows(path: string, kind: FileKind, delimiter = ','): AsyncGenerator<string[]> {
  if (kind === 'csv') {
    yield* readCsvRows(path, delimiter)
    return
  }
  const fh = await open(path, 'r')
  try {
    const { size } = await fh.stat()
    const tail = Buffer.alloc(Math.min(size, 70_000))
    await fh.read(tail, 0, tail.length, size - tail.length)
    if (unpackedSize(tail) > XLSX_MAX_UNPACKED_BYTES)
      throw badFile('The workbook unpacks to more than 4 GB; upload the journal as CSV')
  } finally {
    await fh.close()
  }
  const reader = new ExcelJS.stream.xlsx.WorkbookReader(path, {
    worksheets: 'emit',
    sharedStrings: 'cache',
    hyperlinks: 'ignore',
    styles: 'ignore',
    entries: 'ignore',
  })
  try {
    for await (const sheet of reader) {
      for await (const row of sheet) {
        const values = (row as ExcelJS.Row).values as ExcelJS.CellValue[]
        const out: string[] = []
        for (let i = 1; i < values.length; i++) {
          const v = values[i]
          out.push(v instanceof Date ? v.toISOString() : cellText(v ?? null).trim())
        }
        if (out.some((c) => c !== '')) yield out
      }
      break // the first worksheet only
    }
  } catch (err) {
    if (err instanceof Error && 'status' in err) throw err
    throw badFile('The file starts like an XLSX workbook but cannot be read as one: save it again, or upload CSV')
  }
}

/**
 * Each header's column key: the explicit mapping first, then the key's own name, then the user's remembered
 * mapping (headers compared as the register import compares them: trimmed, case and spacing ignored).
 */
export function resolveColumns<K extends string>(
  headers: string[],
  keys: readonly K[],
  required: readonly K[],
  explicit: Record<string, string> | undefined,
  remembered: Record<string, string>,
  aliases: Record<string, K> = {},
): { index: Partial<Record<K, number>>; used: Record<string, string> } {
  const lookup = (m: Record<string, string> | undefined, h: string) => {
    if (!m) return undefined
    const found = Object.keys(m).find((k) => norm(k) === norm(h))
    return found === undefined ? undefined : m[found]
  }
  const index: Partial<Record<K, number>> = {}
  const used: Record<string, string> = {}
  const twice: string[] = []
  headers.forEach((h, i) => {
    if (!h) return
    const own = keys.find((k) => norm(k) === norm(h)) ?? aliases[norm(h)]
    const chosen = lookup(explicit, h) ?? own ?? lookup(remembered, h) ?? ''
    used[h] = chosen
    if (!chosen || !keys.includes(chosen as K)) return
    const k = chosen as K
    if (index[k] !== undefined) twice.push(`"${headers[index[k]]}" and "${h}" both map to ${k}`)
    else index[k] = i
  })
  if (twice.length) throw badFile(`Two columns map to the same field: ${twice.join('; ')}`, { headers, mapping: used })
  const missing = required.filter((k) => index[k] === undefined)
  if (missing.length)
    throw badFile(`The file has no column for ${missing.join(', ')}: map its headers (${headers.join(', ')})`, {
      headers,
      mapping: used,
      missing,
    })
  return { index, used }
}

// ---- times ----

const ISO = /^(\d{4})-(\d{2})-(\d{2})[T ](\d{2}):(\d{2})(?::(\d{2})(?:[.,](\d{1,9}))?)?\s*(Z|[+-]\d{2}:?\d{2})?$/
const DMY = /^(\d{1,2})\.(\d{1,2})\.(\d{4})[ T](\d{1,2}):(\d{2})(?::(\d{2})(?:[.,](\d{1,9}))?)?$/

/**
 * Parses "YYYY-MM-DD hh:mm[:ss[.fff]]" (optionally with Z or ±hh:mm, which then wins) or "DD.MM.YYYY hh:mm[:ss]"
 * as a time in the given IANA zone; answers epoch milliseconds or NaN.
 */
export function createTimeParser(timeZone: string): (text: string) => number {
  const utc = timeZone === 'UTC' || timeZone === 'Etc/UTC'
  const fmt = utc
    ? null
    : new Intl.DateTimeFormat('en-US', {
        timeZone,
        hourCycle: 'h23',
        year: 'numeric',
        month: 'numeric',
        day: 'numeric',
        hour: 'numeric',
        minute: 'numeric',
        second: 'numeric',
      })
  const offsetAt = (instant: number): number => {
    const p: Record<string, number> = {}
    for (const part of fmt!.formatToParts(new Date(instant))) if (part.type !== 'literal') p[part.type] = +part.value
    return Date.UTC(p.year, p.month - 1, p.day, p.hour, p.minute, p.second) - Math.floor(instant / 1000) * 1000
  }
  const cache = new Map<number, number>()
  const localToUtc = (local: number): number => {
    if (utc) return local
    const hour = Math.floor(local / 3_600_000)
    let off = cache.get(hour)
    if (off === undefined) {
      const guess = offsetAt(local)
      off = offsetAt(local - guess)
      if (cache.size > 100_000) cache.clear()
      cache.set(hour, off)
    }
    return local - off
  }
  return (text: string): number => {
    let m = ISO.exec(text)
    let y: number, mo: number, d: number
    if (m) {
      y = +m[1]
      mo = +m[2]
      d = +m[3]
    } else {
      m = DMY.exec(text)
      if (!m) return Number.NaN
      d = +m[1]
      mo = +m[2]
      y = +m[3]
    }
    const h = +m[4]
    const mi = +m[5]
    const s = m[6] ? +m[6] : 0
    const ms = m[7] ? Math.floor(+(m[7] + '00').slice(0, 3)) : 0
    if (mo < 1 || mo > 12 || d < 1 || d > 31 || h > 23 || mi > 59 || s > 59) return Number.NaN
    const local = Date.UTC(y, mo - 1, d, h, mi, s, ms)
    if (new Date(local).getUTCDate() !== d) return Number.NaN
    const zone = m[8]
    if (zone) {
      if (zone === 'Z') return local
      const sign = zone[0] === '-' ? -1 : 1
      const digits = zone.slice(1).replace(':', '')
      return local - sign * (+digits.slice(0, 2) * 60 + +digits.slice(2)) * 60_000
    }
    return localToUtc(local)
  }
}

/** COPY text-format escaping of one value. */
export function copyText(v: string): string {
  return /[\\\t\n\r]/.test(v)
    ? v.replace(/\\/g, '\\\\').replace(/\t/g, '\\t').replace(/\n/g, '\\n').replace(/\r/g, '\\r')
    : v
}

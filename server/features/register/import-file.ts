import { createHash } from 'node:crypto'
import { Readable } from 'node:stream'
import ExcelJS from 'exceljs'
import type { Kysely, Transaction } from 'kysely'
import Papa from 'papaparse'
import { ErrorCode } from '../../../shared/errors.ts'
import { IMPORT_MAX_BYTES } from '../../../shared/schemas/imports.ts'
import { unneutraliseCell } from '../../csv.ts'
import type { Database } from '../../db/schema.ts'
import { AppError } from '../../errors.ts'
import { badFile } from './column-mapping.ts'

// The pieces every spreadsheet import shares (the register import, the history import, configuration exports):
// reading a CSV or XLSX upload by its content with a row limit, the file's checksum and name, turning mapped rows
// into cells by column key, and the dry run (a transaction rolled back). docs/register.md#the-import.

/** What the file looked like: header cells and the data rows with their spreadsheet row numbers. */
export interface FileTable {
  headers: string[]
  rows: { row: number; values: string[] }[]
}

/** A problem of one row before it is numbered: `field` is a column key, or `_row` for the whole row. */
export interface RowProblem {
  field: string
  message: string
}

/** A data row as stored in a batch: its spreadsheet row number, its cells by column key, problems of its shape. */
export interface StoredRow<K extends string = string> {
  row: number
  cells: Partial<Record<K, string>>
  problems: RowProblem[]
}

// ---- reading the file ----

export const ZIP_SIGNATURE = Buffer.from([0x50, 0x4b, 0x03, 0x04])
export const OLE2_SIGNATURE = Buffer.from([0xd0, 0xcf, 0x11, 0xe0])
/** Uncompressed size a workbook may unpack to (a 5 MB XLSX of text unpacks to well under this). */
const XLSX_MAX_UNPACKED_BYTES = 200 * 1024 * 1024
export const MAX_COLUMNS = 200

/** A refusal of a file with more data rows than one upload takes, as soon as the reader gets past the limit. */
export const tooManyRows = (maxRows: number) =>
  badFile(`The file has more than ${maxRows} data rows; one import takes at most ${maxRows}: split it, e.g. by area`)

/**
 * Reads the file by its content: XLSX (ZIP signature) or UTF-8 CSV; anything else is refused. With `maxRows`, the
 * reader stops and refuses the file as soon as it meets one non-empty data row more than that (docs/security.md,
 * "Uploads"): a small file of a million rows costs the rows up to the limit, not a million.
 */
export async function readTable(buffer: Buffer, opts: { maxRows?: number } = {}): Promise<FileTable> {
  if (buffer.length === 0) throw badFile('The file is empty')
  if (buffer.length > IMPORT_MAX_BYTES) throw badFile(`The file is larger than ${IMPORT_MAX_BYTES / 1024 / 1024} MB`)
  if (buffer.subarray(0, 4).equals(ZIP_SIGNATURE)) return readXlsx(buffer, opts.maxRows ?? Infinity)
  if (buffer.subarray(0, 4).equals(OLE2_SIGNATURE))
    throw badFile('This is an old Excel (.xls) workbook: save it as .xlsx or as CSV (UTF-8) and upload it again')
  let text: string
  try {
    text = new TextDecoder('utf-8', { fatal: true }).decode(buffer)
  } catch {
    throw badFile(
      'The file is neither an XLSX workbook nor CSV text in UTF-8: ' +
        'upload the register as .xlsx, or save the CSV as UTF-8',
    )
  }
  for (let i = 0; i < text.length; i++) {
    const c = text.charCodeAt(i)
    if (c < 0x20 && c !== 0x09 && c !== 0x0a && c !== 0x0d)
      throw badFile('The file holds binary data, not CSV text: upload the register as .xlsx or .csv')
  }
  return readCsv(text.replace(/^\uFEFF/, ''), opts.maxRows ?? Infinity)
}

/** Comma, semicolon or tab, whichever the header line holds most of. */
export function guessDelimiter(text: string): string {
  const first = text.slice(0, text.search(/\r?\n|$/))
  const count = (d: string) => first.split(d).length - 1
  return [',', ';', '\t'].reduce((best, d) => (count(d) > count(best) ? d : best), ',')
}

/**
 * Parses CSV text (no size cap: callers check the size first), record by record; more than `maxRows` non-empty data
 * rows stop the parser and refuse the file.
 */
export function readCsv(text: string, maxRows = Infinity): FileTable {
  const records: string[][] = []
  let quote: Papa.ParseError | undefined
  let filled = 0
  let over = false
  Papa.parse<string[]>(text, {
    delimiter: guessDelimiter(text),
    skipEmptyLines: false,
    step: (r, parser) => {
      quote ??= r.errors.find((e) => e.type === 'Quotes')
      if (quote) return parser.abort()
      if (records.length > 0 && r.data.some((v) => v.trim() !== '') && ++filled > maxRows) {
        over = true
        return parser.abort()
      }
      records.push(r.data)
    },
  })
  if (quote)
    throw badFile(
      `Row ${records.length + 1}: ${quote.message}; ` +
        'a text cell that holds the delimiter or a line break needs double quotes around it',
    )
  if (over) throw tooManyRows(maxRows)
  const [head = [], ...data] = records
  // a record is one spreadsheet row even when a quoted cell spans lines, so record index + 1 is the row number
  return { headers: head.map((h) => h.trim()), rows: data.map((values, i) => ({ row: i + 2, values })) }
}

/** Sum of the uncompressed sizes in the ZIP central directory (Infinity for ZIP64); 0 when there is none to read. */
export function unpackedSize(buf: Buffer): number {
  const min = Math.max(0, buf.length - 65_557)
  let eocd = -1
  for (let i = buf.length - 22; i >= min; i--) {
    if (buf.readUInt32LE(i) === 0x06054b50) {
      eocd = i
      break
    }
  }
  if (eocd < 0) return 0
  const entries = buf.readUInt16LE(eocd + 10)
  let p = buf.readUInt32LE(eocd + 16)
  let total = 0
  for (let n = 0; n < entries; n++) {
    if (p + 46 > buf.length || buf.readUInt32LE(p) !== 0x02014b50) return total
    const size = buf.readUInt32LE(p + 24)
    if (size === 0xffffffff) return Infinity
    total += size
    p += 46 + buf.readUInt16LE(p + 28) + buf.readUInt16LE(p + 30) + buf.readUInt16LE(p + 32)
  }
  return total
}

export function cellText(v: ExcelJS.CellValue): string {
  if (v === null || v === undefined) return ''
  if (typeof v === 'string') return v
  if (typeof v === 'number') return String(v)
  if (typeof v === 'boolean') return v ? 'yes' : 'no'
  if (v instanceof Date) return v.toISOString().slice(0, 10)
  if ('richText' in v) return v.richText.map((t) => t.text).join('')
  if ('formula' in v || 'sharedFormula' in v) return cellText((v as { result?: ExcelJS.CellValue }).result ?? null)
  if ('error' in v) return String(v.error)
  if ('text' in v) return String(v.text)
  return ''
}

/**
 * Reads the first worksheet with ExcelJS's streaming reader, row by row, never building the workbook in memory; more
 * than `maxRows` non-empty data rows stop the reader and refuse the file, so a small workbook of a million rows is
 * refused after the limit's worth of rows (docs/security.md, "Uploads"). Parsing goes in chunks between which the
 * server answers other requests.
 */
async function readXlsx(buffer: Buffer, maxRows: number): Promise<FileTable> {
  // a damaged directory is left to the workbook reader; a huge one is refused before anything is unpacked
  if (unpackedSize(buffer) > XLSX_MAX_UNPACKED_BYTES)
    throw badFile(
      `The workbook unpacks to more than ${XLSX_MAX_UNPACKED_BYTES / 1024 / 1024} MB; ` +
        'upload the register as CSV or split it',
    )
  const reader = new ExcelJS.stream.xlsx.WorkbookReader(Readable.from([buffer]), {
    worksheets: 'emit',
    sharedStrings: 'cache',
    hyperlinks: 'ignore',
    styles: 'cache', // number formats tell dates from numbers, as the whole-workbook reader did
    entries: 'ignore',
  })
  let sheets = 0
  let headers: string[] | null = null
  let width = 0
  const rows: FileTable['rows'] = []
  try {
    for await (const sheet of reader) {
      sheets++
      for await (const r of sheet) {
        const row = r as ExcelJS.Row
        const cells = row.values as ExcelJS.CellValue[]
        const values = Array.from({ length: Math.max(width, cells.length - 1) }, (_, k) =>
          cellText(cells[k + 1] ?? null),
        )
        if (row.number === 1) {
          width = Math.min(values.length, MAX_COLUMNS + 1)
          headers = values.slice(0, width).map((h) => h.trim())
          continue
        }
        if (!values.some((v) => v !== '')) continue
        if (rows.length >= maxRows) throw tooManyRows(maxRows)
        rows.push({ row: row.number, values })
      }
      break // the first worksheet only
    }
  } catch (err) {
    if (err instanceof AppError) throw err
    throw badFile(
      'The file starts like an XLSX workbook but cannot be opened as one: ' +
        'save it again from the spreadsheet program, or upload CSV (UTF-8)',
    )
  }
  if (!sheets) throw badFile('The workbook has no worksheet')
  return { headers: headers ?? [], rows }
}

/** SHA-256 (hex) of the uploaded bytes, as the audit trail records it. */
export const fileChecksum = (buffer: Buffer) => createHash('sha256').update(buffer).digest('hex')

/** The file's own name without any folder, at most 200 characters. */
export const safeFileName = (name: string) => name.replace(/^.*[\\/]/, '').slice(0, 200) || 'upload'

/** Refuses a table that cannot be a layout's file at all: too many columns, or no header row. */
export function checkTableShape(table: FileTable, layoutColumns: number, what: string): void {
  if (table.headers.length > MAX_COLUMNS)
    throw badFile(`The file has ${table.headers.length} columns; the ${what} has ${layoutColumns}`)
  if (table.headers.every((h) => !h)) throw badFile('Row 1 must hold the column headers')
}

/**
 * The data rows as cells by column key (the mapped columns only; spreadsheet escapes undone), skipping empty rows; a
 * row with more cells than the header has columns carries a problem. Refuses a file without data rows and one over
 * `maxRows`.
 */
export function toStoredRows<K extends string>(table: FileTable, keys: (K | null)[], maxRows: number): StoredRow<K>[] {
  const rows: StoredRow<K>[] = []
  for (const { row, values } of table.rows) {
    if (values.every((v) => v.trim() === '')) continue
    const cells: Partial<Record<K, string>> = {}
    keys.forEach((k, i) => {
      if (k) cells[k] = unneutraliseCell((values[i] ?? '').trim())
    })
    const problems: RowProblem[] = []
    if (values.slice(table.headers.length).some((v) => v.trim() !== '')) {
      problems.push({
        field: '_row',
        message:
          `The row has more cells than the header has columns (${table.headers.length}): ` +
          'a text cell that holds the delimiter needs double quotes',
      })
    }
    rows.push({ row, cells, problems })
  }
  if (!rows.length) throw badFile('The file has headers but no data rows')
  if (rows.length > maxRows)
    throw badFile(`The file has ${rows.length} data rows; one import takes at most ${maxRows}: split it, e.g. by area`)
  return rows
}

/** Thrown to roll a dry run's transaction back while carrying its outcome out. */
class DryRunDone<T> extends Error {
  constructor(readonly outcome: T) {
    super('dry run')
  }
}

/** Runs `work` in a transaction that is always rolled back, and returns what it found (the dry run of an import). */
export async function inRolledBackTransaction<T>(
  db: Kysely<Database>,
  work: (trx: Transaction<Database>) => Promise<T>,
): Promise<T> {
  try {
    await db.transaction().execute(async (trx) => {
      throw new DryRunDone(await work(trx))
    })
  } catch (err) {
    if (err instanceof DryRunDone) return err.outcome as T
    throw err
  }
  throw new Error('the dry run did not roll back')
}

/**
 * The end of an upload's check: a dry run answers the checked batch; otherwise a batch with problems is refused (422
 * with its rows and errors; nothing is imported) and a clean one is committed at once by `commit`, whose answer keeps
 * the column mapping the check used.
 */
export async function commitUnlessDryRun<R extends { errors: unknown[]; mapping: unknown; ignoredColumns: unknown }>(
  dryRun: boolean,
  checked: R,
  commit: () => Promise<R>,
): Promise<R> {
  if (dryRun) return checked
  if (checked.errors.length) {
    throw new AppError(
      422,
      ErrorCode.UNPROCESSABLE,
      `The file has ${checked.errors.length} problem(s); nothing was imported`,
      { ...checked },
    )
  }
  return { ...(await commit()), mapping: checked.mapping, ignoredColumns: checked.ignoredColumns }
}

import { randomUUID } from 'node:crypto'
import canonicalize from 'canonicalize'
import type { Transaction } from 'kysely'
import { ZodError, type z } from 'zod'
import type { AppAbility } from '../../../shared/abilities/index.ts'
import { draftVerdict } from '../../../shared/domain/rules/limits.ts'
import { ErrorCode } from '../../../shared/errors.ts'
import {
  IMPORT_MAX_ROWS,
  IMPORT_REQUIRED_COLUMNS,
  type ImportAction,
  type ImportError,
  type ImportMapping,
  ImportMappingSchema,
  type ImportResult,
  type ImportRowResult,
  type ImportUploadFields,
} from '../../../shared/schemas/imports.ts'
import {
  type CreateInstrumentInput,
  CreateInstrumentInputSchema,
  type CreateLimitInput,
  CreateLimitInputSchema,
  CreateProcessInputSchema,
  type Limit,
} from '../../../shared/schemas/register.ts'
import {
  REGISTER_COLUMNS,
  type RegisterColumnKey,
  signalFromText,
  signalToText,
} from '../../../shared/schemas/register-io.ts'
import { allowedRow, authorize } from '../../authorize.ts'
import { openBaselineChangeRequest } from '../change-requests/change-requests.service.ts'
import type { Clock } from '../../clock.ts'
import type { AppDeps } from '../../deps.ts'
import type { Database, ProcessRow } from '../../db/schema.ts'
import { AppError, invalidState, notFound, validationFailed } from '../../errors.ts'
import { type AuditContext, appendAudit } from '../audit/audit.repository.ts'
import { applyInstrumentDefinition, insertInstrument, lockInstrument } from './instruments.service.ts'
import { activeLimitTagsOnInstrument } from './instruments.repository.ts'
import * as repo from './imports.repository.ts'
import { insertProcess } from './processes.repository.ts'
import { applyLimitDefinition, insertLimit, lockLimit } from './limits.service.ts'
import { findInstrumentIdsByLimitIds, lockLimitsByTags } from './limits.repository.ts'
import { toInstrument, toLimit, toProcess } from './register.mappers.ts'
import { badFile, normHeader, resolveColumnMapping } from './column-mapping.ts'
import {
  checkTableShape,
  commitUnlessDryRun,
  fileChecksum,
  inRolledBackTransaction,
  readTable,
  type RowProblem,
  safeFileName,
  type StoredRow as FileRow,
  toStoredRows,
} from './import-file.ts'

// The register import: a CSV or XLSX file in the register file layout (shared/schemas/register-io.ts) is read,
// mapped to column keys, checked in a transaction that is rolled back (dry run), stored as a batch, and committed
// later all or nothing. Rows are matched on (site, instrument tag) and (site, limit tag). docs/register.md.

type Trx = Transaction<Database>
type Cells = Partial<Record<RegisterColumnKey, string>>
type InstrumentDto = Awaited<ReturnType<typeof lockInstrument>>

type StoredRow = FileRow<RegisterColumnKey>

const HEADER_OF = new Map<string, string>(REGISTER_COLUMNS.map((c) => [c.key, c.header]))
const COLUMN_KEYS = new Set<string>(REGISTER_COLUMNS.map((c) => c.key))
const header = (key: string) => HEADER_OF.get(key) ?? key

export { badFile }
// the file reader lives in import-file.ts, shared by every spreadsheet import; these names stay importable from here
export {
  cellText,
  guessDelimiter,
  OLE2_SIGNATURE,
  readCsv,
  readTable,
  tooManyRows,
  unpackedSize,
  ZIP_SIGNATURE,
} from './import-file.ts'
import { batchesOf } from '../../db/batches.ts'

// ---- mapping headers to column keys ----

export const norm = normHeader

/** The column key of each header (column-mapping.ts), against the register file layout. */
function resolveMapping(headers: string[], explicit: ImportMapping | undefined, remembered: ImportMapping) {
  return resolveColumnMapping(
    headers,
    REGISTER_COLUMNS,
    IMPORT_REQUIRED_COLUMNS,
    explicit,
    remembered,
    'map its headers to the register columns, or start from an exported register file',
  )
}

// ---- cells to API inputs ----

class CellProblems {
  list: RowProblem[] = []
  add(field: string, message: string) {
    this.list.push({ field, message })
  }
  has(field: string) {
    return this.list.some((p) => p.field === field)
  }
}

const NUMBER = /^[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$/

function numberCell(v: string, key: string, errs: CellProblems): number | null | undefined {
  if (v === '') return null
  if (NUMBER.test(v)) return Number(v)
  errs.add(
    key,
    /^-?\d+,\d+$/.test(v)
      ? `${header(key)}: use a dot as the decimal separator (${v.replace(',', '.')})`
      : `${header(key)}: "${v}" is not a number`,
  )
  return undefined
}

function intCell(v: string, key: string, errs: CellProblems): number | null | undefined {
  const n = numberCell(v, key, errs)
  if (n === null || n === undefined) return n
  if (Number.isInteger(n)) return n
  errs.add(key, `${header(key)}: enter a whole number`)
  return undefined
}

function boolCell(v: string, key: string, errs: CellProblems): boolean | undefined {
  const t = v.toLowerCase()
  if (['yes', 'y', 'true', '1', 'x'].includes(t)) return true
  if (['no', 'n', 'false', '0', ''].includes(t)) return t === '' ? undefined : false
  errs.add(key, `${header(key)}: write yes or no`)
  return undefined
}

const ENUM_ALIASES: Record<string, string> = {
  '%': 'percent_span',
  '%_span': 'percent_span',
  percent: 'percent_span',
  engineering_units: 'eu',
  asset: 'asset_production',
  production: 'asset_production',
  'asset/production': 'asset_production',
  asset_or_production: 'asset_production',
}
const enumCell = (v: string) => {
  const t = v.toLowerCase().replace(/[\s-]+/g, '_')
  return ENUM_ALIASES[t] ?? t
}

/** The instrument's editable fields as the API reads them (for overlaying file cells on a stored instrument). */
function instrumentBase(i: InstrumentDto): Record<string, unknown> {
  return {
    processId: i.processId,
    tag: i.tag,
    measuredVariable: i.measuredVariable,
    unit: i.unit,
    pressureReference: i.pressureReference,
    rangeLow: i.rangeLow,
    rangeHigh: i.rangeHigh,
    normalLow: i.normalLow,
    normalHigh: i.normalHigh,
    designLow: i.designLow,
    designHigh: i.designHigh,
    burnout: i.burnout,
    signal: i.signal,
    deviceKind: i.deviceKind,
    deviceDescription: i.deviceDescription,
    model: i.model,
  }
}

const INSTRUMENT_NUMBERS = ['rangeLow', 'rangeHigh', 'normalLow', 'normalHigh', 'designLow', 'designHigh'] as const
const INSTRUMENT_ENUMS = ['measuredVariable', 'burnout', 'deviceKind'] as const
const INSTRUMENT_REQUIRED = [
  'measuredVariable',
  'unit',
  'rangeLow',
  'rangeHigh',
  'burnout',
  'signal',
  'deviceKind',
] as const

/** File cells over the stored instrument (columns the file lacks keep their stored value). */
function instrumentRaw(cells: Cells, base: InstrumentDto | null, errs: CellProblems): Record<string, unknown> {
  const raw: Record<string, unknown> = base ? instrumentBase(base) : {}
  if (cells.instrumentTag !== undefined) raw.tag = cells.instrumentTag
  if (cells.unit !== undefined) raw.unit = cells.unit
  if (cells.deviceDescription !== undefined) raw.deviceDescription = cells.deviceDescription
  if (cells.model !== undefined) raw.model = cells.model
  for (const k of INSTRUMENT_ENUMS)
    if (cells[k] !== undefined) raw[k] = cells[k] === '' ? undefined : enumCell(cells[k])
  if (cells.pressureReference !== undefined)
    raw.pressureReference = cells.pressureReference === '' ? null : enumCell(cells.pressureReference)
  for (const k of INSTRUMENT_NUMBERS) {
    if (cells[k] === undefined) continue
    const n = numberCell(cells[k], k, errs)
    if (n !== undefined) raw[k] = n
    else delete raw[k]
  }
  if (cells.signal !== undefined || cells.headTransmitter !== undefined) {
    const stored = base?.signal
    const head =
      cells.headTransmitter !== undefined
        ? (boolCell(cells.headTransmitter, 'headTransmitter', errs) ?? false)
        : Boolean(stored && 'headTransmitter' in stored && stored.headTransmitter)
    const text = cells.signal ?? (base ? signalToText(base.signal) : '')
    if (text === '') delete raw.signal
    else {
      const signal = signalFromText(text, head)
      if (signal) raw.signal = signal
      else {
        delete raw.signal
        errs.add(
          'signal',
          `Signal: "${text}" is not understood; ` +
            'write e.g. thermocouple K, rtd Pt100 3-wire, 4-20mA, 4-20mA sqrt, voltage 0-10V or switch',
        )
      }
    }
  }
  for (const k of INSTRUMENT_REQUIRED) {
    if ((raw[k] === undefined || raw[k] === null || raw[k] === '') && !errs.has(k))
      errs.add(k, `${header(k)}: enter a value`)
  }
  return raw
}

const LIMIT_TEXTS = [
  'tag',
  'description',
  'action',
  'consequence',
  'operatorResponse',
  'causes',
  'confirmation',
] as const
const LIMIT_ENUMS = ['direction', 'limitClass', 'deadbandUnit', 'severity', 'alarmType'] as const
const LIMIT_NUMBERS = [
  'setpoint',
  'deadband',
  'onDelaySec',
  'offDelaySec',
  'responseTimeMin',
  'analyticalLimit',
  'processSafetyTimeSec',
  'requiredResponseTimeSec',
  'maxBypassHours',
  'claimedRiskReduction',
] as const
const LIMIT_DEFAULTED = new Set(['deadband', 'onDelaySec', 'offDelaySec'])
const LIMIT_BOOLS = ['latching', 'badValueTrip', 'bypassPermitted', 'codeSetInterval', 'safetyRelatedAlarm'] as const
const LIMIT_REQUIRED = ['direction', 'limitClass', 'setpoint', 'severity', 'testIntervalMonths'] as const

/** File cells over the stored limit (columns the file lacks keep their stored value). */
function limitRaw(cells: Cells, base: Limit | null, errs: CellProblems): Record<string, unknown> {
  const raw: Record<string, unknown> = base ? { ...base } : {}
  for (const k of LIMIT_TEXTS) if (cells[k] !== undefined) raw[k] = cells[k]
  for (const k of LIMIT_ENUMS) if (cells[k] !== undefined) raw[k] = cells[k] === '' ? undefined : enumCell(cells[k])
  if (cells.resetRole !== undefined) raw.resetRole = cells.resetRole === '' ? null : enumCell(cells.resetRole)
  if (cells.impactCategory !== undefined)
    raw.impactCategory = cells.impactCategory === '' ? null : enumCell(cells.impactCategory)
  for (const k of LIMIT_NUMBERS) {
    if (cells[k] === undefined) continue
    const n = numberCell(cells[k], k, errs)
    raw[k] = n === null && LIMIT_DEFAULTED.has(k) ? undefined : n
    if (n === undefined) delete raw[k]
  }
  for (const k of LIMIT_BOOLS) if (cells[k] !== undefined) raw[k] = boolCell(cells[k], k, errs)
  if (cells.testIntervalMonths !== undefined)
    raw.testIntervalMonths = intCell(cells.testIntervalMonths, 'testIntervalMonths', errs) ?? undefined
  if (cells.testGraceDays !== undefined) raw.testGraceDays = intCell(cells.testGraceDays, 'testGraceDays', errs)
  if (cells.sil !== undefined) {
    const m = /^(?:sil\s*)?([123])$/i.exec(cells.sil)
    if (cells.sil === '') raw.sil = null
    else if (m) raw.sil = Number(m[1])
    else errs.add('sil', 'SIL: write 1, 2 or 3, or leave it empty')
  }
  if (cells.compensatingMeasures !== undefined)
    raw.compensatingMeasures = cells.compensatingMeasures
      .split(/[;\n]/)
      .map((s) => s.trim())
      .filter(Boolean)
  if (cells.subsystems !== undefined) {
    if (cells.subsystems === '') raw.subsystems = []
    else {
      try {
        raw.subsystems = JSON.parse(cells.subsystems)
      } catch {
        errs.add(
          'subsystems',
          'Subsystems: not valid JSON; write a list such as [{"role":"sensor","architecture":"1oo2",…}]',
        )
      }
    }
  }
  for (const k of LIMIT_REQUIRED) {
    if ((raw[k] === undefined || raw[k] === null || raw[k] === '') && !errs.has(k))
      errs.add(k, `${header(k)}: enter a value`)
  }
  return raw
}

function instrumentColumn(path: PropertyKey[]): string {
  const [first, second] = path.map(String)
  if (first === 'tag') return 'instrumentTag'
  if (first === 'processId') return 'process'
  if (first === 'signal') return second === 'headTransmitter' ? 'headTransmitter' : 'signal'
  return COLUMN_KEYS.has(first) ? first : 'instrumentTag'
}

function limitColumn(path: PropertyKey[]): string {
  const first = String(path[0])
  if (first === 'instrumentIds') return 'votedInstrumentTags'
  if (first === 'processId') return 'process'
  return COLUMN_KEYS.has(first) ? first : 'tag'
}

function zodProblems(err: ZodError, column: (path: PropertyKey[]) => string, errs: CellProblems) {
  for (const issue of err.issues) {
    const field = column(issue.path)
    if (errs.has(field)) continue
    const where =
      field === 'subsystems' && issue.path.length > 1
        ? `subsystem ${Number(issue.path[1]) + 1}${issue.path.length > 2 ? ` ${issue.path.slice(2).join('.')}` : ''}: `
        : ''
    errs.add(field, `${header(field)}: ${where}${issue.message}`)
  }
}

function parseWith<T>(
  schema: z.ZodType<T>,
  raw: unknown,
  column: (path: PropertyKey[]) => string,
  errs: CellProblems,
): T | null {
  const r = schema.safeParse(raw)
  if (r.success) return r.data
  zodProblems(r.error, column, errs)
  return null
}

// ---- comparing with what is stored ----

/** An instrument definition as the database keeps it (so equal definitions compare equal). */
function instrumentStored(d: CreateInstrumentInput): Record<string, unknown> {
  return {
    instrumentTag: d.tag,
    measuredVariable: d.measuredVariable,
    unit: d.unit,
    pressureReference: d.measuredVariable === 'pressure' ? d.pressureReference : null,
    rangeLow: d.rangeLow,
    rangeHigh: d.rangeHigh,
    normalLow: d.normalLow,
    normalHigh: d.normalHigh,
    designLow: d.designLow,
    designHigh: d.designHigh,
    burnout: d.burnout,
    signal: d.signal,
    deviceKind: d.deviceKind,
    deviceDescription: d.deviceDescription,
    model: d.model,
  }
}

/** A limit definition as the database keeps it (the same normalisation as the limit service's columns). */
function limitStored(d: CreateLimitInput): Record<string, unknown> {
  const { processId: _p, instrumentIds, ...rest } = d
  return {
    ...rest,
    instrumentTag: instrumentIds[0],
    votedInstrumentTags: instrumentIds.slice(1),
    resetRole: d.latching ? d.resetRole : null,
    maxBypassHours: d.bypassPermitted ? d.maxBypassHours : null,
    subsystems: d.sil ? d.subsystems : [],
  }
}

/** Column keys whose values differ, in file order. */
function differences(a: Record<string, unknown>, b: Record<string, unknown>): string[] {
  const keys = [...new Set([...Object.keys(a), ...Object.keys(b)])]
  const order = (k: string) => {
    const i = REGISTER_COLUMNS.findIndex((c) => c.key === k)
    return i < 0 ? 999 : i
  }
  return keys
    .filter((k) => canonicalize(a[k] ?? null) !== canonicalize(b[k] ?? null))
    .sort((x, y) => order(x) - order(y))
}

// ---- running the rows against the register ----

/** Errors of one row that stop it (thrown inside a row, caught by the row's savepoint). */
class RowFailure extends Error {
  constructor(readonly problems: RowProblem[]) {
    super(problems.map((p) => p.message).join('; '))
  }
}

/** Turns a service error into row problems; anything unexpected is rethrown (and fails the whole import). */
function problemsOf(err: unknown, fallbackField: string, column: (path: PropertyKey[]) => string): RowProblem[] {
  if (err instanceof RowFailure) return err.problems
  if (err instanceof ZodError) {
    const errs = new CellProblems()
    zodProblems(err, column, errs)
    return errs.list
  }
  if (err instanceof AppError && err.status < 500) {
    const details = err.details as
      | { operatingWindow?: { errors: { field?: string; message: string }[] }; fields?: Record<string, string[]> }
      | undefined
    if (details?.operatingWindow?.errors.length) {
      return details.operatingWindow.errors.map((e) => ({
        field: e.field && COLUMN_KEYS.has(e.field) ? e.field : 'setpoint',
        message: `Operating window: ${e.message}`,
      }))
    }
    if (details?.fields && err.status !== 409) {
      return Object.entries(details.fields).flatMap(([f, msgs]) =>
        msgs.map((m) => ({ field: column(f.split('.')), message: m })),
      )
    }
    return [{ field: fallbackField, message: err.message }]
  }
  throw err
}

/** Runs `fn` inside a savepoint: on a row problem the row's writes are undone and the problems returned. */
async function inSavepoint(
  trx: Trx,
  fn: () => Promise<void>,
  fallbackField: string,
  column: (path: PropertyKey[]) => string,
): Promise<RowProblem[]> {
  try {
    await repo.inImportRowSavepoint(trx, fn)
    return []
  } catch (err) {
    const found = problemsOf(err, fallbackField, column)
    return found.length
      ? found
      : [{ field: fallbackField, message: err instanceof Error ? err.message : 'The row could not be written' }]
  }
}

interface RowState {
  stored: StoredRow
  problems: RowProblem[]
  process?: { id: number; area_id: number; site_id: number }
  instrumentId?: number
  changes: Set<string>
  wrote: boolean
  created: boolean
  limitId?: number
  warnings: { code: string; field?: string; message: string }[]
}

interface RunOutcome {
  rows: ImportRowResult[]
  errors: ImportError[]
  limitIds: number[]
}

const splitTags = (v: string | undefined) =>
  (v ?? '')
    .split(/[;,\n]/)
    .map((s) => s.trim())
    .filter(Boolean)
const processKey = (areaId: number, name: string) => `${areaId}|${name.toLowerCase()}`

/** The site's instruments named in the file, by lower-case tag, locked for the rest of the transaction. */
async function preloadInstruments(trx: Trx, siteId: number, tags: string[]): Promise<Map<string, InstrumentDto>> {
  const map = new Map<string, InstrumentDto>()
  for (const chunk of batchesOf(tags, 1000)) {
    const rows = await repo.lockInstrumentsByTags(trx, siteId, chunk)
    for (const r of rows) map.set(r.tag.toLowerCase(), toInstrument(r))
  }
  return map
}

/** The site's limits named in the file, by lower-case tag, in the API shape, locked for the rest of the transaction. */
async function preloadLimits(trx: Trx, siteId: number, tags: string[]): Promise<Map<string, Limit>> {
  const map = new Map<string, Limit>()
  for (const chunk of batchesOf(tags, 1000)) {
    const rows = await lockLimitsByTags(trx, siteId, chunk)
    const voted = await findInstrumentIdsByLimitIds(
      trx,
      rows.map((r) => r.id),
    )
    for (const r of rows) map.set(r.tag.toLowerCase(), toLimit(r, voted.get(r.id) ?? []))
  }
  return map
}

/**
 * Checks (and, inside the caller's transaction, writes) every row: first the processes and instruments of all rows,
 * then the limits, so a voted instrument may be defined on a later row. A row that writes does so in a savepoint; a
 * row with problems leaves nothing behind and the others go on, so one run reports every problem of the file. Rows
 * that change nothing cost no query: what they are compared with is loaded once, up front.
 */
async function runRows(
  trx: Trx,
  clock: Clock,
  ctx: AuditContext,
  site: { id: number; code: string },
  stored: StoredRow[],
  batchId: string | undefined,
): Promise<RunOutcome> {
  const areas = await repo.listSiteAreas(trx, site.id)
  const processes = new Map<string, ProcessRow>()
  for (const p of await repo.listSiteProcesses(trx, site.id)) {
    if (!processes.has(processKey(p.area_id, p.name))) processes.set(processKey(p.area_id, p.name), p)
  }
  const lowerTags = (f: (s: StoredRow) => string[]) => [
    ...new Set(
      stored
        .flatMap(f)
        .filter(Boolean)
        .map((t) => t.toLowerCase()),
    ),
  ]
  const instruments = await preloadInstruments(
    trx,
    site.id,
    lowerTags((s) => [s.cells.instrumentTag ?? '', ...splitTags(s.cells.votedInstrumentTags)]),
  )
  const limits = await preloadLimits(
    trx,
    site.id,
    lowerTags((s) => [s.cells.tag ?? '']),
  )
  const changedInstruments = new Set<number>()
  const states: RowState[] = stored.map((s) => ({
    stored: s,
    problems: [...s.problems],
    changes: new Set(),
    wrote: false,
    created: false,
    warnings: [],
  }))
  const firstRowOfLimit = new Map<string, number>()
  const instrumentSeen = new Map<string, { row: number; definition: Record<string, unknown> }>()

  // pass 1: the shape of the row, then its process and instrument
  for (const st of states) {
    const { cells, row } = st.stored
    const errs = new CellProblems()
    if (!cells.instrumentTag) errs.add('instrumentTag', 'Instrument tag is empty')
    if (!cells.tag) errs.add('tag', 'Limit tag is empty')
    else {
      const earlier = firstRowOfLimit.get(cells.tag.toLowerCase())
      if (earlier) errs.add('tag', `Limit tag ${cells.tag} is already on row ${earlier}`)
      else firstRowOfLimit.set(cells.tag.toLowerCase(), row)
    }
    if (cells.site && cells.site.toLowerCase() !== site.code.toLowerCase())
      errs.add('site', `This row is for site ${cells.site}; this import is for ${site.code}`)
    const area = cells.area ? areas.find((a) => a.name.toLowerCase() === cells.area!.toLowerCase()) : undefined
    if (!cells.area) errs.add('area', 'Area is empty')
    else if (!area)
      errs.add(
        'area',
        `Area "${cells.area}" does not exist at ${site.code} (areas: ${areas.map((a) => a.name).join(', ')})`,
      )
    if (!cells.process) errs.add('process', 'Process is empty')
    else {
      const p = CreateProcessInputSchema.safeParse({ areaId: area?.id ?? 1, name: cells.process })
      if (!p.success) errs.add('process', `Process: ${p.error.issues[0].message}`)
    }
    const process = area && cells.process ? (processes.get(processKey(area.id, cells.process)) ?? null) : null
    const instrument = cells.instrumentTag ? (instruments.get(cells.instrumentTag.toLowerCase()) ?? null) : null
    const limit = cells.tag ? (limits.get(cells.tag.toLowerCase()) ?? null) : null
    if (limit && area && cells.process && limit.processId !== process?.id) {
      errs.add(
        'process',
        `Limit ${limit.tag} belongs to ${limit.processName} in ${limit.areaName}; ` +
          'an import does not move a limit to another process',
      )
    }
    const instrumentInput = parseWith(
      CreateInstrumentInputSchema,
      { ...instrumentRaw(cells, instrument, errs), processId: instrument?.processId ?? process?.id ?? 1 },
      instrumentColumn,
      errs,
    )
    parseWith(
      CreateLimitInputSchema,
      { ...limitRaw(cells, limit, errs), processId: process?.id ?? 1, instrumentIds: [1] },
      limitColumn,
      errs,
    )
    st.problems.push(...errs.list)
    if (st.problems.length || !area || !instrumentInput) continue

    const definition = instrumentStored(instrumentInput)
    const key = instrumentInput.tag.toLowerCase()
    const seen = instrumentSeen.get(key)
    if (seen) {
      const diff = differences(seen.definition, definition)
      if (diff.length) {
        st.problems.push(
          ...diff.map((f) => ({
            field: f,
            message: `${header(f)}: instrument ${instrumentInput.tag} is described differently on row ${seen.row}`,
          })),
        )
        continue
      }
    }
    let diff: string[] = []
    if (instrument && !seen) {
      const current = parseWith(CreateInstrumentInputSchema, instrumentBase(instrument), instrumentColumn, errs)
      diff = current ? differences(instrumentStored(current), definition) : ['instrumentTag']
      const active = diff.length ? (await activeLimitTagsOnInstrument(trx, instrument.id)).map((r) => r.tag) : []
      if (active.length) {
        st.problems.push({
          field: diff[0],
          message:
            `Instrument ${instrument.tag} feeds active limits (${active.join(', ')}): ` +
            'it changes through a change request, not an import ' +
            `(changed: ${diff.map(header).join(', ')})`,
        })
        continue
      }
    }
    st.process = process ?? undefined
    st.instrumentId = instrument?.id
    if (process && instrument && !diff.length) {
      instrumentSeen.set(key, { row, definition })
      continue
    }
    let newProcess: ProcessRow | null = null
    st.problems.push(
      ...(await inSavepoint(
        trx,
        async () => {
          let proc = process
          if (!proc) {
            const now = clock.now()
            proc = newProcess = await insertProcess(trx, {
              area_id: area.id,
              site_id: site.id,
              name: cells.process!,
              description: '',
              created_at: now,
              updated_at: now,
            })
            await appendAudit(trx, clock, ctx, {
              action: 'process.create',
              entityType: 'Process',
              entityId: proc.id,
              after: toProcess(proc),
              batchId,
            })
          }
          st.process = proc
          if (!instrument) {
            st.instrumentId = await insertInstrument(trx, clock, ctx, instrumentInput, proc, batchId)
            st.changes.add('instrumentTag')
          } else if (diff.length) {
            try {
              await applyInstrumentDefinition(trx, clock, ctx, instrument, instrumentInput, {
                changeRequestId: null,
                reason: 'import',
                batchId,
              })
            } catch (err) {
              if (err instanceof AppError && err.status === 422)
                throw new RowFailure([{ field: diff[0], message: err.message }])
              throw err
            }
            for (const f of diff) st.changes.add(f)
          }
          instruments.set(key, await lockInstrument(trx, st.instrumentId!))
        },
        'instrumentTag',
        instrumentColumn,
      )),
    )
    if (st.problems.length) {
      if (instrument) instruments.set(key, instrument)
      else instruments.delete(key)
      continue
    }
    st.wrote = true
    if (newProcess) processes.set(processKey(area.id, cells.process!), newProcess)
    if (instrument) changedInstruments.add(instrument.id)
    instrumentSeen.set(key, { row, definition })
  }

  // pass 2: the limits
  const limitIds: number[] = []
  for (const st of states) {
    if (st.problems.length) continue
    const { cells } = st.stored
    const errs = new CellProblems()
    const instrumentIds = [st.instrumentId!]
    let limit = limits.get(cells.tag!.toLowerCase()) ?? null
    if (cells.votedInstrumentTags !== undefined) {
      for (const t of splitTags(cells.votedInstrumentTags)) {
        const found = instruments.get(t.toLowerCase())
        if (!found)
          errs.add(
            'votedInstrumentTags',
            `Instrument ${t} does not exist at ${site.code} (nor on a row of this file without errors)`,
          )
        else if (instrumentIds.includes(found.id)) errs.add('votedInstrumentTags', `Instrument ${t} is listed twice`)
        else instrumentIds.push(found.id)
      }
    } else if (limit) {
      instrumentIds.push(...limit.instrumentIds.slice(1).filter((id) => id !== st.instrumentId))
    }
    const input = parseWith(
      CreateLimitInputSchema,
      { ...limitRaw(cells, limit, errs), processId: st.process!.id, instrumentIds },
      limitColumn,
      errs,
    )
    if (errs.list.length || !input) {
      st.problems.push(...errs.list)
      continue
    }
    // an instrument changed by this import recomputed the limit's stored window results
    if (limit && limit.instrumentIds.some((id) => changedInstruments.has(id))) limit = await lockLimit(trx, limit.id)
    if (limit) {
      st.limitId = limit.id
      const current = parseWith(CreateLimitInputSchema, { ...limit }, limitColumn, errs)
      const diff = current ? differences(limitStored(current), limitStored(input)) : ['tag']
      const draft = draftVerdict(limit)
      if (diff.length && !draft.allowed) {
        st.problems.push({ field: diff[0], message: `${draft.reason} (changed: ${diff.map(header).join(', ')})` })
        continue
      }
      st.warnings = limit.operatingWindow.warnings
      if (!diff.length) continue
      const before = limit
      st.problems.push(
        ...(await inSavepoint(
          trx,
          async () => {
            const { processId: _p, ...patch } = input
            const after = await applyLimitDefinition(trx, clock, ctx, before, patch, {
              changeRequestId: null,
              reason: 'import',
              action: 'limit.update',
              batchId,
            })
            st.warnings = after.operatingWindow.warnings
          },
          'tag',
          limitColumn,
        )),
      )
      for (const f of diff) st.changes.add(f)
    } else {
      st.problems.push(
        ...(await inSavepoint(
          trx,
          async () => {
            st.limitId = await insertLimit(trx, clock, ctx, input, st.process!, batchId)
            st.warnings = await repo.findLimitWindowWarnings(trx, st.limitId)
          },
          'tag',
          limitColumn,
        )),
      )
      st.created = true
    }
    if (st.problems.length) continue
    st.wrote = true
    limitIds.push(st.limitId!)
  }
  // rows whose instrument changed but whose limit did not still count as updates; their limits were re-checked
  for (const st of states)
    if (!st.problems.length && st.wrote && st.limitId && !limitIds.includes(st.limitId)) limitIds.push(st.limitId)

  const rows: ImportRowResult[] = []
  const errors: ImportError[] = []
  const order = (f: string) => REGISTER_COLUMNS.findIndex((c) => c.key === f)
  for (const st of states) {
    if (st.problems.length) {
      const unique = st.problems.filter(
        (p, i, all) => all.findIndex((q) => q.field === p.field && q.message === p.message) === i,
      )
      errors.push(...unique.sort((a, b) => order(a.field) - order(b.field)).map((p) => ({ row: st.stored.row, ...p })))
      continue
    }
    const action: ImportAction = st.created ? 'create' : st.wrote ? 'update' : 'unchanged'
    rows.push({
      row: st.stored.row,
      tag: st.stored.cells.tag ?? '',
      action,
      changes: action === 'update' ? [...st.changes] : [],
      warnings: st.warnings,
    })
  }
  return { rows, errors, limitIds }
}

function summarize(rows: ImportRowResult[]) {
  return {
    create: rows.filter((r) => r.action === 'create').length,
    update: rows.filter((r) => r.action === 'update').length,
    unchanged: rows.filter((r) => r.action === 'unchanged').length,
  }
}

async function siteFor(deps: AppDeps, siteId: number) {
  const site = await repo.findImportSite(deps.db, siteId)
  if (!site) throw validationFailed({ siteId: ['The site does not exist'] })
  return site
}

/** The mapping a user has saved (file header → column key). */
export async function getRememberedMapping(deps: AppDeps, userId: number): Promise<ImportMapping> {
  const row = await repo.findImportMapping(deps.db, userId)
  if (!row) return {}
  // entries that no longer name a column are dropped rather than failing the upload
  return Object.fromEntries(
    Object.entries(row.mapping).filter(([h, k]) => ImportMappingSchema.safeParse({ [h]: k }).success),
  ) as ImportMapping
}

/**
 * Reads an uploaded register file, checks every row in a transaction that is rolled back, stores the batch (rows,
 * file name, SHA-256) and remembers the mapping for the user. With `dryRun: false` a clean batch is committed at once.
 */
export async function checkImport(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  userId: number,
  file: { buffer: Buffer; fileName: string },
  fields: ImportUploadFields,
): Promise<ImportResult> {
  const site = await siteFor(deps, fields.siteId)
  authorize(ability, 'import', 'Limit', { siteId: site.id })
  const table = await readTable(file.buffer, { maxRows: IMPORT_MAX_ROWS })
  checkTableShape(table, REGISTER_COLUMNS.length, 'register file')
  const remembered = await getRememberedMapping(deps, userId)
  const { keys, used, ignored } = resolveMapping(table.headers, fields.mapping, remembered)
  const stored = toStoredRows(table, keys, IMPORT_MAX_ROWS)
  const checksum = fileChecksum(file.buffer)
  const fileName = safeFileName(file.fileName)

  const outcome = await inRolledBackTransaction(deps.db, (trx) =>
    runRows(trx, deps.clock, ctx, site, stored, undefined),
  )

  const id = await deps.db.transaction().execute(async (trx) => {
    const now = deps.clock.now()
    const v = { siteId: site.id, userId, fileName, checksum, rows: stored, now }
    const batch = await repo.insertImportBatch(trx, 'register', v)
    const merged = Object.entries({ ...remembered, ...used }).slice(-500)
    await repo.saveImportMapping(trx, userId, Object.fromEntries(merged), now)
    return batch.id
  })

  const result: ImportResult = {
    id,
    siteId: site.id,
    status: 'checked',
    fileName,
    checksum,
    rowCount: stored.length,
    mapping: used,
    ignoredColumns: ignored,
    rows: outcome.rows,
    errors: outcome.errors,
    summary: summarize(outcome.rows),
  }
  return commitUnlessDryRun(fields.dryRun, result, () => commitImport(deps, ability, ctx, id))
}

/**
 * Commits a checked batch in one transaction: the rows are checked again against the register as it is now and written
 * with one `import.commit` audit event whose batch id every row's event carries. A batch with errors is refused (422)
 * and writes nothing; a batch whose rows are all unchanged is marked `unchanged` and writes no event.
 */
export async function commitImport(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
): Promise<ImportResult> {
  return deps.db.transaction().execute(async (trx) => {
    const batch = allowedRow(await repo.lockImportBatch(trx, 'register', id), ability, 'import', 'Limit', 'Import')
    if (batch.status !== 'checked') {
      throw invalidState(
        batch.status === 'committed'
          ? 'This import is already committed'
          : 'This import changed nothing and is closed; upload the file again to import it again',
      )
    }
    const site = await repo.findImportSite(trx, batch.site_id)
    if (!site) throw notFound('Site')
    const batchId = randomUUID()
    const outcome = await runRows(trx, deps.clock, ctx, site, batch.rows, batchId)
    const base = {
      id: batch.id,
      siteId: batch.site_id,
      fileName: batch.file_name,
      checksum: batch.checksum,
      rowCount: batch.row_count,
      mapping: {},
      ignoredColumns: [],
      rows: outcome.rows,
      errors: outcome.errors,
      summary: summarize(outcome.rows),
    }
    if (outcome.errors.length) {
      throw new AppError(
        422,
        ErrorCode.UNPROCESSABLE,
        `The import has ${outcome.errors.length} problem(s); nothing was written`,
        { ...base, status: 'checked' },
      )
    }
    const unchanged = outcome.rows.every((r) => r.action === 'unchanged')
    const now = deps.clock.now()
    if (!unchanged) {
      await appendAudit(trx, deps.clock, ctx, {
        action: 'import.commit',
        entityType: 'ImportBatch',
        entityId: batch.id,
        after: { rowCount: batch.row_count, checksum: batch.checksum, fileName: batch.file_name },
        batchId,
      })
    }
    await repo.closeImportBatch(trx, batch.id, unchanged ? 'unchanged' : 'committed', now)
    // the imported drafts become active only through a change request that a second person approves
    let changeRequestId: number | null = null
    if (!unchanged) {
      const drafts = await repo.proposedLimitIdsWithoutOpenChange(trx, outcome.limitIds)
      changeRequestId = await openBaselineChangeRequest(deps, ability, ctx, trx, {
        siteId: batch.site_id,
        limitIds: drafts,
        importBatchId: batch.id,
        fileName: batch.file_name,
        auditBatchId: batchId,
      })
    }
    return {
      ...base,
      status: unchanged ? ('unchanged' as const) : ('committed' as const),
      limitIds: outcome.limitIds,
      changeRequestId,
    }
  })
}

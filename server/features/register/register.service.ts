import { createHash } from 'node:crypto'
import ExcelJS from 'exceljs'
import { toCsv } from '../../csv.ts'
import type { AppAbility } from '../../../shared/abilities/index.ts'
import { computeTestSignal } from '../../../shared/domain/test-signal.ts'
import { MissingInputError, OutOfRangeError, UnitConversionError } from '../../../shared/domain/errors.ts'
import { ErrorCode } from '../../../shared/errors.ts'
import { parseSort } from '../../../shared/schemas/common.ts'
import type { Limit, LimitListQuery } from '../../../shared/schemas/register.ts'
import { REGISTER_COLUMNS, type RegisterFileRow, signalToText } from '../../../shared/schemas/register-io.ts'
import { scopeSites } from '../../authorize.ts'
import type { AppDeps } from '../../deps.ts'
import { AppError, validationFailed } from '../../errors.ts'
import type { CurrentUser } from '../../types/express.d.ts'
import * as repo from './limits.repository.ts'
import { getLimit } from './limits.service.ts'
import { toInstrument, toLimit } from './register.mappers.ts'
import { getSitePolicy } from '../sites/sites.service.ts'
import { ChangeCache, changeFeedOf } from '../../db/change-feed.ts'
import { batchesOf } from '../../db/batches.ts'

type LimitQuery = LimitListQuery
const COUNT_CAP = 10_000

function filtersOf(user: CurrentUser | null, q: LimitQuery): repo.LimitFilters {
  return {
    siteIds: scopeSites(user, q.siteId),
    areaIds: q.areaId,
    processIds: q.processId,
    instrumentIds: q.instrumentId,
    limitClass: q.limitClass,
    direction: q.direction,
    sil: q.sil,
    status: q.status,
    protectionState: q.protectionState,
    testStatus: q.testStatus,
    hasWarnings: q.hasWarnings,
    hasErrors: q.hasErrors,
    q: q.q,
  }
}

function decodeCursor(c: string): { values: unknown[]; id: number } {
  try {
    const v = JSON.parse(Buffer.from(c, 'base64url').toString('utf8'))
    if (!Array.isArray(v.v) || !Number.isInteger(v.id)) throw new Error('bad cursor')
    return { values: v.v, id: v.id }
  } catch {
    throw validationFailed({ cursor: ['This cursor is not valid; start from the first page'] })
  }
}

const SORT_VALUE: Record<repo.LimitSortField, (l: Limit) => unknown> = {
  tag: (l) => l.tag,
  setpoint: (l) => l.setpoint,
  sil: (l) => l.sil,
  priority: (l) => l.priority,
  status: (l) => l.status,
  updatedAt: (l) => l.updatedAt,
  limitClass: (l) => l.limitClass,
  direction: (l) => l.direction,
  testDueDate: (l) => l.testDueDate,
}

/** A register page as sent: its JSON text, a weak ETag, and its compressed forms, each made on first demand. */
export interface RegisterPage {
  json: string
  etag: string
  encoded: Partial<Record<'br' | 'gzip', Buffer>>
}

function registerPage(json: string): RegisterPage {
  return { json, etag: `W/"${createHash('sha1').update(json).digest('base64url')}"`, encoded: {} }
}

/**
 * Per-process caches of the register list, kept until the register changes here or on another instance
 * (docs/architecture.md, "Caches and change notifications"): the counts of filtered sets (turning a page does not
 * count again) and the register screen's pages as sent. Only what was read on the primary is kept: a read standby
 * may not yet have replayed the change that dropped an entry.
 */
interface RegisterCaches {
  counts: ChangeCache<number>
  pages: ChangeCache<RegisterPage>
  /** Pages being loaded, shared by requests for the same page that arrive meanwhile (same generation only). */
  loading: Map<string, { generation: number; page: Promise<RegisterPage> }>
}
const PAGE_CACHE_MS = 2 * 60_000
const PAGE_CACHE_ENTRIES = 500
const registerCaches = new WeakMap<object, RegisterCaches>()
function registerCachesOf(deps: AppDeps): RegisterCaches {
  let caches = registerCaches.get(deps.pool)
  if (!caches) {
    const feed = changeFeedOf(deps.pool)
    const made: RegisterCaches = {
      counts: new ChangeCache<number>(feed, 5 * 60_000, 1000),
      pages: new ChangeCache<RegisterPage>(feed, PAGE_CACHE_MS, PAGE_CACHE_ENTRIES),
      loading: new Map(),
    }
    feed?.subscribe((change) => {
      if (change === '*' || change === 'register') {
        made.counts.drop()
        made.pages.drop()
        made.loading.clear()
      }
    })
    registerCaches.set(deps.pool, made)
    caches = made
  }
  return caches
}

/** True when `deps.db` is the read standby's (onReadStandby), whose answers the caches must not keep. */
const onStandby = (deps: AppDeps) => !!deps.readStandby && deps.db === deps.readStandby.db

/** Keyset paging needs one sort column without empty values. */
const KEYSET_UNSUITED = ['sil', 'priority', 'testDueDate']

function cursorOf(value: unknown, id: number): string {
  const v = value instanceof Date ? value.toISOString() : value
  return Buffer.from(JSON.stringify({ v: [v], id })).toString('base64url')
}

/**
 * The register page: only the user's sites; `total` stops counting at 10,000 (`totalCapped`). A single-field sort also
 * answers `nextCursor` for keyset paging. `view=row` answers the register screen's page as JSON text built by
 * PostgreSQL (the router sends it as it is), kept per process until the register changes; the default answers whole
 * limits.
 */
export async function listRegister(
  deps: AppDeps,
  user: CurrentUser | null,
  q: LimitQuery,
): Promise<
  { page: RegisterPage } | { items: Limit[]; total: number; totalCapped: boolean; nextCursor: string | null }
> {
  const f = filtersOf(user, q)
  const sort = parseSort(q.sort, Object.keys(repo.LIMIT_SORT_COLUMNS)) as {
    field: repo.LimitSortField
    desc: boolean
  }[]
  const after = q.cursor ? decodeCursor(q.cursor) : undefined
  if (after && (sort.length > 1 || KEYSET_UNSUITED.includes(sort[0]?.field ?? '')))
    throw validationFailed({ cursor: ['Cursor paging works with one sort column without empty values'] })
  const page = { limit: q.pageSize, offset: after ? undefined : (q.page - 1) * q.pageSize, after }
  const caches = registerCachesOf(deps)
  const keep = !onStandby(deps)
  const countKey = JSON.stringify(f)
  const counted = caches.counts.get(countKey)
  const gen = caches.counts.mark()
  const count = async () => {
    if (counted !== undefined) return counted
    const n = await repo.countLimits(deps.db, f, COUNT_CAP)
    if (keep) caches.counts.set(countKey, n, gen)
    return n
  }
  // keyset paging needs a sort column without nulls
  const single =
    sort.length <= 1 && !KEYSET_UNSUITED.includes(sort[0]?.field ?? 'tag') ? (sort[0]?.field ?? 'tag') : null
  if (q.view === 'row') {
    const load = async () => {
      const [rows, total] = await Promise.all([repo.listRegisterRows(deps.db, f, sort, page), count()])
      const last = rows[rows.length - 1]
      const nextCursor = single && last && rows.length === q.pageSize ? cursorOf(last.sort_value, last.id) : null
      return registerPage(
        `{"items":[${rows.map((r) => r.json).join(',')}],"total":${Math.min(total, COUNT_CAP)},` +
          `"totalCapped":${total > COUNT_CAP},"nextCursor":${JSON.stringify(nextCursor)}}`,
      )
    }
    if (!keep) return { page: await load() }
    const key = JSON.stringify([f, sort, page])
    const hit = caches.pages.get(key)
    if (hit) return { page: hit }
    const generation = caches.pages.mark()
    const pending = caches.loading.get(key)
    if (pending && pending.generation === generation) return { page: await pending.page }
    const loading = load()
    caches.loading.set(key, { generation, page: loading })
    try {
      const loaded = await loading
      caches.pages.set(key, loaded, generation)
      return { page: loaded }
    } finally {
      if (caches.loading.get(key)?.page === loading) caches.loading.delete(key)
    }
  }
  const [rows, total] = await Promise.all([repo.listLimits(deps.db, f, sort, page), count()])
  const items = rows.map((r) => toLimit(r, r.instrument_ids))
  const last = items[items.length - 1]
  const nextCursor = single && last && items.length === q.pageSize ? cursorOf(SORT_VALUE[single](last), last.id) : null
  return { items, total: Math.min(total, COUNT_CAP), totalCapped: total > COUNT_CAP, nextCursor }
}

const yesNo = (b: boolean) => (b ? 'yes' : 'no')
const str = (v: unknown) => (v === null || v === undefined ? '' : String(v))

/** The filtered register as a file (CSV or XLSX) in the import's column layout. */
export async function exportRegister(deps: AppDeps, user: CurrentUser | null, q: LimitQuery, format: 'csv' | 'xlsx') {
  const f = filtersOf(user, q)
  const rows = await repo.listLimits(deps.db, f, [{ field: 'tag', desc: false }], { limit: 100_000 })
  const ids = new Map(rows.map((r) => [r.id, r.instrument_ids]))
  const instrumentIds = [...new Set([...ids.values()].flat())]
  const instruments = new Map<number, ReturnType<typeof toInstrument>>()
  for (const batch of batchesOf(instrumentIds, 5000)) {
    const chunk = await repo.findInstrumentRows(deps.db, batch)
    for (const r of chunk) instruments.set(r.id, toInstrument(r))
  }
  const records: RegisterFileRow[] = rows.map((r) => {
    const l = toLimit(r, ids.get(r.id) ?? [])
    const inst = instruments.get(l.instrumentIds[0])!
    return {
      site: l.siteCode,
      area: l.areaName,
      process: l.processName,
      instrumentTag: inst.tag,
      votedInstrumentTags: l.instrumentIds
        .slice(1)
        .map((id) => instruments.get(id)?.tag ?? '')
        .join('; '),
      measuredVariable: inst.measuredVariable,
      unit: inst.unit,
      pressureReference: str(inst.pressureReference),
      rangeLow: str(inst.rangeLow),
      rangeHigh: str(inst.rangeHigh),
      normalLow: str(inst.normalLow),
      normalHigh: str(inst.normalHigh),
      designLow: str(inst.designLow),
      designHigh: str(inst.designHigh),
      burnout: inst.burnout,
      signal: signalToText(inst.signal),
      headTransmitter: yesNo('headTransmitter' in inst.signal && inst.signal.headTransmitter),
      deviceKind: inst.deviceKind,
      deviceDescription: inst.deviceDescription,
      model: inst.model,
      tag: l.tag,
      description: l.description,
      direction: l.direction,
      limitClass: l.limitClass,
      setpoint: str(l.setpoint),
      deadband: str(l.deadband),
      deadbandUnit: l.deadbandUnit,
      onDelaySec: str(l.onDelaySec),
      offDelaySec: str(l.offDelaySec),
      latching: yesNo(l.latching),
      resetRole: str(l.resetRole),
      badValueTrip: yesNo(l.badValueTrip),
      action: l.action,
      consequence: l.consequence,
      operatorResponse: l.operatorResponse,
      responseTimeMin: str(l.responseTimeMin),
      severity: l.severity,
      impactCategory: str(l.impactCategory),
      alarmType: l.alarmType,
      causes: l.causes,
      confirmation: l.confirmation,
      safetyRelatedAlarm: yesNo(l.safetyRelatedAlarm),
      claimedRiskReduction: str(l.claimedRiskReduction),
      analyticalLimit: str(l.analyticalLimit),
      processSafetyTimeSec: str(l.processSafetyTimeSec),
      requiredResponseTimeSec: str(l.requiredResponseTimeSec),
      bypassPermitted: yesNo(l.bypassPermitted),
      maxBypassHours: str(l.maxBypassHours),
      compensatingMeasures: l.compensatingMeasures.join('; '),
      testIntervalMonths: str(l.testIntervalMonths),
      testGraceDays: str(l.testGraceDays),
      codeSetInterval: yesNo(l.codeSetInterval),
      sil: str(l.sil),
      subsystems: l.sil ? JSON.stringify(l.subsystems) : '',
    }
  })
  const stamp = deps.clock.now().toISOString().slice(0, 10)
  if (format === 'csv') {
    const body = toCsv({
      fields: REGISTER_COLUMNS.map((c) => c.header),
      data: records.map((r) => REGISTER_COLUMNS.map((c) => r[c.key])),
    })
    return {
      contentType: 'text/csv; charset=utf-8',
      fileName: `limitkeeper-register-${stamp}.csv`,
      body: Buffer.from(body, 'utf8'),
    }
  }
  const wb = new ExcelJS.Workbook()
  wb.creator = 'Limitkeeper'
  const ws = wb.addWorksheet('Register')
  ws.columns = REGISTER_COLUMNS.map((c) => ({ header: c.header, key: c.key, width: Math.max(10, c.header.length + 2) }))
  ws.getRow(1).font = { bold: true }
  ws.views = [{ state: 'frozen', ySplit: 1 }]
  for (const r of records) ws.addRow(r)
  const buf = await wb.xlsx.writeBuffer()
  return {
    contentType: 'application/vnd.openxmlformats-officedocument.spreadsheetml.sheet',
    fileName: `limitkeeper-register-${stamp}.xlsx`,
    body: Buffer.from(buf as ArrayBuffer),
  }
}

/**
 * What to inject at the trip point (docs/domain/test-signals.md test signal):
 * 400 without a needed cold junction, 422 out of range.
 */
export async function testSignalFor(
  deps: AppDeps,
  ability: AppAbility,
  id: number,
  q: { coldJunction?: number; mode: 'mv_source' | 'tc_simulate' },
) {
  const limit = await getLimit(deps, ability, id)
  const [row] = await repo.findInstrumentRows(deps.db, [limit.instrumentIds[0]])
  const inst = toInstrument(row)
  const policy = await getSitePolicy(deps.db, limit.siteId)
  try {
    return computeTestSignal(
      { unit: inst.unit, rangeLow: inst.rangeLow, rangeHigh: inst.rangeHigh, signal: inst.signal },
      {
        direction: limit.direction,
        setpoint: limit.setpoint,
        deadband: limit.deadband,
        deadbandUnit: limit.deadbandUnit,
        tolerance: policy.defaultTolerancePercentSpan,
        toleranceUnit: 'percent_span',
      },
      { mode: q.mode, coldJunctionC: q.coldJunction },
    )
  } catch (err) {
    if (err instanceof MissingInputError) throw validationFailed({ coldJunction: [err.message] }, err.message)
    if (err instanceof OutOfRangeError || err instanceof UnitConversionError)
      throw new AppError(422, ErrorCode.UNPROCESSABLE, err.message)
    throw err
  }
}

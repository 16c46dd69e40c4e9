import type { Insertable, Transaction } from 'kysely'
import type { AppAbility } from '../../../shared/abilities/index.ts'
import { dayIn, type HistoryRecord, readHistoryRow, spansOverlap } from '../../../shared/domain/history-import.ts'
import { toleranceInEu } from '../../../shared/domain/trip-test-result.ts'
import { ErrorCode } from '../../../shared/errors.ts'
import {
  HISTORY_COLUMNS,
  HISTORY_REQUIRED_COLUMNS,
  type HistoryColumnKey,
  type HistoryImportResult,
  type HistoryRowResult,
  type HistoryUploadFields,
} from '../../../shared/schemas/history-import.ts'
import { IMPORT_MAX_ROWS, type ImportError } from '../../../shared/schemas/imports.ts'
import { allowedRow, authorize } from '../../authorize.ts'
import type { AppDeps } from '../../deps.ts'
import type { BypassTable, Database, TripTestTable } from '../../db/schema.ts'
import { AppError, invalidState, validationFailed } from '../../errors.ts'
import { type AuditContext, appendAudit } from '../audit/audit.repository.ts'
import { resolveColumnMapping } from '../register/column-mapping.ts'
import {
  checkTableShape,
  commitUnlessDryRun,
  fileChecksum,
  readTable,
  safeFileName,
  type StoredRow,
  toStoredRows,
} from '../register/import-file.ts'
import { contentHash } from '../signatures/signatures.ts'
import { policyOf } from '../sites/sites.service.ts'
import { refreshTestSchedules } from '../trip-tests/trip-tests.service.ts'
import * as repo from './history-import.repository.ts'

// The history import: a migrating site's last trip tests, commissioning (validation) dates and past bypasses, read
// from a CSV or XLSX file with the register import's reader, column mapping and row limit, checked (dry run), stored
// as a batch and committed all or nothing. Every record is marked imported and names its batch; the commit writes
// one audit event with the file's SHA-256, the importer and the row counts. docs/trip-tests.md#history-import.

type Trx = Transaction<Database>
type Db = AppDeps['db'] | Trx
type Row = StoredRow<HistoryColumnKey>
type Site = NonNullable<Awaited<ReturnType<typeof repo.findSite>>>
type LimitRow = Awaited<ReturnType<typeof repo.limitsByTags>>[number]

/** A row that passed every check, with the limit it names. */
interface Checked {
  row: number
  record: HistoryRecord
  limit: LimitRow
  action: 'create' | 'unchanged'
}

interface Outcome {
  checked: Checked[]
  errors: ImportError[]
}

const ORDER = new Map<string, number>(HISTORY_COLUMNS.map((c, i) => [c.key, i]))
const fmt = (n: number) => String(n)

function summaryOf(c: Checked, timeZone: string): string {
  const r = c.record
  if (r.record === 'commissioning')
    return c.action === 'unchanged'
      ? `Commissioned on ${r.commissionedOn} (already on the limit)`
      : `Commissioned on ${r.commissionedOn}`
  if (r.record === 'test') {
    const parts = [`Test on ${r.performedOn}: ${r.passed ? 'passed' : 'failed'}`]
    if (r.asFound !== null) parts.push(`as-found ${fmt(r.asFound)}`)
    if (r.asLeft !== null) parts.push(`as-left ${fmt(r.asLeft)}`)
    if (r.tester) parts.push(`by ${r.tester}`)
    return parts.join(', ')
  }
  const local = (d: Date) =>
    `${dayIn(d, timeZone)} ${d.toLocaleTimeString('en-GB', { timeZone, hour: '2-digit', minute: '2-digit' })}`
  return `Bypass from ${local(r.start)} to ${local(r.end)}: ${r.reason}`
}

/**
 * Checks every row against the site as it is now: the limit tag exists at the site, no record duplicates one on
 * record or one of an earlier row (a test of the same limit on the same calendar day; a bypass overlapping one of the
 * same limit; a second or different commissioning date), besides the checks of readHistoryRow. In a commit the
 * limits are locked first.
 */
async function checkRows(db: Db, site: Site, rows: Row[], now: Date, lock: boolean): Promise<Outcome> {
  const at = { timeZone: site.time_zone, now }
  const read = rows.map((r) => ({ stored: r, ...readHistoryRow(r.cells, at) }))
  const tags = [...new Set(read.flatMap((r) => (r.record ? [r.record.tag.toLowerCase()] : [])))]
  const limits = new Map((await repo.limitsByTags(db, site.id, tags, lock)).map((l) => [l.tag.toLowerCase(), l]))
  const ids = [...limits.values()].map((l) => l.id)
  const [tests, bypasses] = await Promise.all([repo.testTimesOf(db, ids), repo.bypassSpansOf(db, ids)])
  const testDays = new Map<string, string>() // `${limitId}|${day}` → where it is
  for (const t of tests)
    testDays.set(
      `${t.limit_id}|${dayIn(t.performed_at, site.time_zone)}`,
      t.source === 'imported' ? 'an imported test' : 'a test recorded in Limitkeeper',
    )
  const spans = new Map<number, { start: Date; end: Date; what: string }[]>()
  for (const b of bypasses)
    spans.set(b.limit_id, [
      ...(spans.get(b.limit_id) ?? []),
      {
        start: b.activated_at!,
        end: b.removed_at ?? new Date(8.64e15),
        what: b.source === 'imported' ? 'an imported bypass' : 'a bypass on record',
      },
    ])
  const commissioning = new Map<number, number>() // limitId → row

  const checked: Checked[] = []
  const errors: ImportError[] = []
  for (const r of read) {
    const problems = [...r.stored.problems, ...r.problems]
    const rec = r.record
    const limit = rec ? limits.get(rec.tag.toLowerCase()) : undefined
    let action: Checked['action'] = 'create'
    if (rec && !limit) problems.push({ field: 'tag', message: `Limit ${rec.tag} does not exist at ${site.code}` })
    if (rec && limit) {
      if (rec.record === 'test') {
        const key = `${limit.id}|${rec.performedOn}`
        const there = testDays.get(key)
        if (there)
          problems.push({
            field: 'date',
            message: `${limit.tag} already has ${there} on ${rec.performedOn}; one test per limit and day is imported`,
          })
        else testDays.set(key, `the test of row ${r.stored.row}`)
      } else if (rec.record === 'bypass') {
        const clash = (spans.get(limit.id) ?? []).find((s) => spansOverlap(s, rec))
        if (clash) problems.push({ field: 'start', message: `The bypass overlaps ${clash.what} of ${limit.tag}` })
        else
          spans.set(limit.id, [
            ...(spans.get(limit.id) ?? []),
            { start: rec.start, end: rec.end, what: `the bypass of row ${r.stored.row}` },
          ])
      } else {
        const earlier = commissioning.get(limit.id)
        if (earlier !== undefined)
          problems.push({ field: 'date', message: `${limit.tag} has a commissioning date on row ${earlier} already` })
        else if (limit.commissioned_at && limit.commissioned_at !== rec.commissionedOn)
          problems.push({
            field: 'date',
            message:
              `${limit.tag} was commissioned on ${limit.commissioned_at} by the register; ` +
              "change it on the limit's page, not by an import",
          })
        else if (limit.commissioned_at === rec.commissionedOn) action = 'unchanged'
        commissioning.set(limit.id, r.stored.row)
      }
    }
    if (problems.length || !rec || !limit) {
      const unique = problems.filter(
        (p, i, all) => all.findIndex((q) => q.field === p.field && q.message === p.message) === i,
      )
      unique.sort((a, b) => (ORDER.get(a.field) ?? -1) - (ORDER.get(b.field) ?? -1))
      errors.push(...unique.map((p) => ({ row: r.stored.row, ...p })))
      continue
    }
    checked.push({ row: r.stored.row, record: rec, limit, action })
  }
  return { checked, errors }
}

function resultOf(
  batch: { id: number; siteId: number; fileName: string; checksum: string; rowCount: number },
  status: HistoryImportResult['status'],
  outcome: Outcome,
  site: Site,
  mapping: { used: Record<string, string>; ignored: string[] } = { used: {}, ignored: [] },
): HistoryImportResult {
  const rows: HistoryRowResult[] = outcome.checked.map((c) => ({
    row: c.row,
    record: c.record.record,
    tag: c.limit.tag,
    limitId: c.limit.id,
    action: c.action,
    summary: summaryOf(c, site.time_zone),
  }))
  const created = (k: HistoryRecord['record']) => rows.filter((r) => r.record === k && r.action === 'create').length
  return {
    ...batch,
    status,
    mapping: mapping.used,
    ignoredColumns: mapping.ignored,
    rows,
    errors: outcome.errors,
    summary: {
      tests: created('test'),
      commissioning: created('commissioning'),
      bypasses: created('bypass'),
      unchanged: rows.filter((r) => r.action === 'unchanged').length,
    },
  }
}

async function siteFor(db: Db, siteId: number): Promise<Site> {
  const site = await repo.findSite(db, siteId)
  if (!site) throw validationFailed({ siteId: ['The site does not exist'] })
  return site
}

/**
 * Reads an uploaded history file, checks every row (dry run: nothing is written but the batch), and stores the batch
 * (rows, file name, SHA-256). With `dryRun: false` a clean batch is committed at once; a batch with problems answers
 * 422 with the row errors and writes nothing.
 */
export async function checkHistoryImport(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  userId: number,
  file: { buffer: Buffer; fileName: string },
  fields: HistoryUploadFields,
): Promise<HistoryImportResult> {
  const site = await siteFor(deps.db, fields.siteId)
  authorize(ability, 'import', 'Limit', { siteId: site.id })
  const table = await readTable(file.buffer, { maxRows: IMPORT_MAX_ROWS })
  checkTableShape(table, HISTORY_COLUMNS.length, 'history file')
  const { keys, used, ignored } = resolveColumnMapping(
    table.headers,
    HISTORY_COLUMNS,
    HISTORY_REQUIRED_COLUMNS,
    fields.mapping,
    {},
    'map its headers to the history columns (docs/trip-tests.md#history-import)',
  )
  const stored = toStoredRows(table, keys, IMPORT_MAX_ROWS)
  const checksum = fileChecksum(file.buffer)
  const fileName = safeFileName(file.fileName)
  const now = deps.clock.now()
  const outcome = await checkRows(deps.db, site, stored, now, false)
  const { id } = await repo.insertHistoryBatch(deps.db, {
    siteId: site.id,
    userId,
    fileName,
    checksum,
    rows: stored,
    now,
  })
  const result = resultOf(
    { id, siteId: site.id, fileName, checksum, rowCount: stored.length },
    'checked',
    outcome,
    site,
    { used, ignored },
  )
  return commitUnlessDryRun(fields.dryRun, result, () => commitHistoryImport(deps, ability, ctx, id))
}

function testRow(
  c: Checked & { record: Extract<HistoryRecord, { record: 'test' }> },
  site: Site,
  batchId: number,
  userId: number,
  now: Date,
): Insertable<TripTestTable> {
  const r = c.record
  const policy = policyOf(site)
  const signal = c.limit.signal
  const content = {
    limit_id: c.limit.id,
    site_id: site.id,
    limit_revision: c.limit.revision,
    kind: 'full' as const,
    // the test form's default method for the sensor when the file names none
    method: r.method ?? (signal.kind === 'switch' ? ('reference_gauge' as const) : ('injection' as const)),
    procedure_ref: '',
    device_serial: '',
    calibrator_id: '',
    work_order: '',
    performed_at: r.performedAt,
    setpoint: c.limit.setpoint,
    // the site's default tolerance, as the test form sets it; the former system's tolerance is not known
    tolerance: policy.defaultTolerancePercentSpan,
    tolerance_unit: 'percent_span' as const,
    tolerance_eu: toleranceInEu(
      policy.defaultTolerancePercentSpan,
      'percent_span',
      Number(c.limit.range_low),
      Number(c.limit.range_high),
    ),
    as_found: r.asFound === null ? null : String(r.asFound),
    // the result is the file's: a failed test counts as a dangerous failure found (docs/trip-tests.md#history-import)
    as_found_result: r.passed ? ('in_tolerance' as const) : ('out_dangerous' as const),
    as_left: r.asLeft === null ? null : String(r.asLeft),
    as_left_result: r.passed ? ('in_tolerance' as const) : ('out' as const),
    passed: r.passed,
    fail_reasons: JSON.stringify(r.passed ? [] : ['Failed, as the imported history records it']),
    notes: r.notes,
    status: 'completed' as const,
    recorded_by: userId,
    source: 'imported' as const,
    import_batch_id: batchId,
    tester_name: r.tester || null,
  }
  return {
    ...content,
    content_hash: contentHash({ ...content, performed_at: r.performedAt.toISOString() }),
    created_at: now,
    updated_at: now,
  }
}

function bypassRow(
  c: Checked & { record: Extract<HistoryRecord, { record: 'bypass' }> },
  site: Site,
  batchId: number,
  userId: number,
  now: Date,
): Insertable<BypassTable> {
  const r = c.record
  return {
    limit_id: c.limit.id,
    site_id: site.id,
    channel_instrument_id: null,
    requested_by: userId,
    reason: r.reason,
    compensating_measures: JSON.stringify([]),
    planned_start: r.start,
    planned_end: r.end,
    status: 'removed',
    activated_at: r.start,
    removed_at: r.end,
    removal_note: r.notes || 'Imported from the former system',
    created_at: now,
    updated_at: now,
    source: 'imported',
    import_batch_id: batchId,
  }
}

/**
 * Commits a checked history batch in one transaction: the rows are checked again against the site as it is now (the
 * limits locked), then the tests, bypasses and commissioning dates are written, the schedules of the limits concerned
 * recomputed, and one `history_import.commit` audit event written with the file's SHA-256, the importer and the row
 * counts. A batch with problems is refused (422) and writes nothing; one whose rows are all unchanged writes nothing
 * but its closing.
 */
export async function commitHistoryImport(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
): Promise<HistoryImportResult> {
  return deps.db.transaction().execute(async (trx) => {
    const batch = allowedRow(await repo.lockHistoryBatch(trx, id), ability, 'import', 'Limit', 'History import')
    if (batch.status !== 'checked')
      throw invalidState(
        batch.status === 'committed'
          ? 'This history import is already committed'
          : 'This history import changed nothing and is closed; upload the file again to import it again',
      )
    const site = await siteFor(trx, batch.site_id)
    const now = deps.clock.now()
    const outcome = await checkRows(trx, site, batch.rows, now, true)
    const head = {
      id: batch.id,
      siteId: batch.site_id,
      fileName: batch.file_name,
      checksum: batch.checksum,
      rowCount: batch.row_count,
    }
    if (outcome.errors.length)
      throw new AppError(
        422,
        ErrorCode.UNPROCESSABLE,
        `The import has ${outcome.errors.length} problem(s); nothing was written`,
        { ...resultOf(head, 'checked', outcome, site) },
      )
    const userId = ctx.actorId!
    const todo = outcome.checked.filter((c) => c.action === 'create')
    const tests = todo.flatMap(({ record, ...c }) =>
      record.record === 'test' ? [testRow({ ...c, record }, site, id, userId, now)] : [],
    )
    const bypasses = todo.flatMap(({ record, ...c }) =>
      record.record === 'bypass' ? [bypassRow({ ...c, record }, site, id, userId, now)] : [],
    )
    const commissioned = todo.flatMap((c) =>
      c.record.record === 'commissioning'
        ? [{ limitId: c.limit.id, tag: c.limit.tag, on: c.record.commissionedOn }]
        : [],
    )
    await repo.insertImportedTests(trx, tests)
    await repo.insertImportedBypasses(trx, bypasses)
    for (const c of commissioned) await repo.setCommissioningDate(trx, c.limitId, c.on, now)
    // imported tests and commissioning dates move due dates and test statuses (docs/domain/due-dates.md)
    const scheduled = [...new Set([...tests.map((t) => t.limit_id), ...commissioned.map((c) => c.limitId)])]
    await refreshTestSchedules(trx, scheduled, now)
    const status = todo.length ? ('committed' as const) : ('unchanged' as const)
    await repo.closeBatch(trx, id, status, now)
    if (todo.length) {
      await appendAudit(trx, deps.clock, ctx, {
        action: 'history_import.commit',
        entityType: 'ImportBatch',
        entityId: id,
        after: {
          kind: 'history',
          fileName: batch.file_name,
          checksum: batch.checksum,
          importer: { id: userId, name: await repo.displayNameOf(trx, userId) },
          rowCount: batch.row_count,
          tests: tests.length,
          bypasses: bypasses.length,
          commissioning: commissioned.length,
          unchanged: outcome.checked.length - todo.length,
          commissioningDates: commissioned.map((c) => ({ limitId: c.limitId, tag: c.tag, commissionedOn: c.on })),
        },
      })
    }
    return resultOf(head, status, outcome, site)
  })
}

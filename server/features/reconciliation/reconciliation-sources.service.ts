// Reconciliation sources: named per site, either an uploaded configuration export (column mapping remembered per
// source) or a live Modbus TCP device with its register map (docs/reconciliation.md#sources).
import { createHash } from 'node:crypto'
import type { z } from 'zod'
import type { AppAbility } from '../../../shared/abilities/index.ts'
import { attributeOf, type Observation } from '../../../shared/domain/reconcile.ts'
import type { ListResult } from '../../../shared/schemas/common.ts'
import {
  type CreateSourceInput,
  EXPORT_COLUMNS,
  EXPORT_REQUIRED_COLUMNS,
  type ExportColumnKey,
  type ExportMapping,
  ExportMappingSchema,
  type ReadNowResult,
  RegisterMapSchema,
  type Run,
  type Source,
  type UpdateSourceInputSchema,
} from '../../../shared/schemas/reconciliation.ts'
import { allowedRow, authorize, readableRow, scopeSites } from '../../authorize.ts'
import type { AppDeps } from '../../deps.ts'
import { conflict, invalidState, validationFailed } from '../../errors.ts'
import { type AuditContext, appendAudit } from '../audit/audit.repository.ts'
import { badFile, resolveColumnMapping } from '../register/column-mapping.ts'
import { readTable } from '../register/imports.service.ts'
import { policyOf } from '../sites/sites.service.ts'
import { readDevice } from './device-read.ts'
import { performRun, toRun } from './reconciliation-runs.service.ts'
import * as repo from './reconciliation.repository.ts'

const HOUR = 3_600_000

/** Hours between scheduled runs: the source's own, else the site policy's for live devices; exports have none. */
export function effectiveScheduleHours(
  s: Pick<repo.SourceRow, 'kind' | 'schedule_hours'>,
  sitePolicy: Record<string, unknown>,
): number | null {
  if (s.kind !== 'modbus') return null
  return s.schedule_hours !== null ? Number(s.schedule_hours) : policyOf({ policy: sitePolicy }).reconcileLiveEveryHours
}

function toSource(
  s: repo.SourceRow,
  policy: Record<string, unknown>,
  lastRun: repo.RunRow | undefined,
  open: number,
): Source {
  return {
    id: s.id,
    siteId: s.site_id,
    name: s.name,
    kind: s.kind,
    description: s.description,
    host: s.host,
    port: s.port,
    unitId: s.unit_id,
    timeoutMs: s.timeout_ms,
    registerMap: RegisterMapSchema.parse(s.register_map),
    columnMapping: s.column_mapping,
    areaIds: s.area_ids,
    tolerances: s.tolerances,
    scheduleHours: s.schedule_hours === null ? null : Number(s.schedule_hours),
    effectiveScheduleHours: effectiveScheduleHours(s, policy),
    active: s.active,
    nextRunAt: s.next_run_at?.toISOString() ?? null,
    version: s.version,
    lastRun: lastRun ? toRun(lastRun) : null,
    openFindings: open,
  }
}

async function sitePolicy(deps: AppDeps, siteId: number) {
  const site = await repo.findSitePolicy(deps.db, siteId)
  if (!site) throw validationFailed({ siteId: ['The site does not exist'] })
  return site.policy
}

async function present(deps: AppDeps, s: repo.SourceRow): Promise<Source> {
  const [runs, open] = await Promise.all([repo.lastRuns(deps.db, [s.id]), repo.openFindingCounts(deps.db, [s.id])])
  return toSource(s, await sitePolicy(deps, s.site_id), runs.get(s.id), open.get(s.id) ?? 0)
}

export async function listSources(
  deps: AppDeps,
  user: { roles: { siteId: number }[] },
  q: { siteId?: number[]; page: number; pageSize: number },
): Promise<ListResult<Source>> {
  const siteIds = scopeSites(user, q.siteId)
  const { rows, total } = await repo.listSources(deps.db, siteIds, {
    limit: q.pageSize,
    offset: (q.page - 1) * q.pageSize,
  })
  const ids = rows.map((r) => r.id)
  const [runs, open] = await Promise.all([repo.lastRuns(deps.db, ids), repo.openFindingCounts(deps.db, ids)])
  const policies = new Map<number, Record<string, unknown>>()
  for (const r of rows) if (!policies.has(r.site_id)) policies.set(r.site_id, await sitePolicy(deps, r.site_id))
  return {
    items: rows.map((r) => toSource(r, policies.get(r.site_id)!, runs.get(r.id), open.get(r.id) ?? 0)),
    total,
  }
}

export async function getSource(deps: AppDeps, ability: AppAbility, id: number): Promise<Source> {
  const s = readableRow(await repo.findSource(deps.db, id), ability, 'ReconciliationSource', 'Source')
  return present(deps, s)
}

async function checkAreas(deps: AppDeps, siteId: number, areaIds: number[]) {
  if (!areaIds.length) return
  const found = await repo.findAreaIdsOfSite(deps.db, siteId, areaIds)
  if (found.length !== new Set(areaIds).size) {
    throw validationFailed({ areaIds: ['Choose areas of the source’s site'] })
  }
}

function nextRunFor(kind: string, now: Date, active: boolean): Date | null {
  // a new or changed live device is read at the next pass of the scheduler
  return kind === 'modbus' && active ? now : null
}

export async function createSource(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  input: CreateSourceInput,
): Promise<Source> {
  authorize(ability, 'create', 'ReconciliationSource', { siteId: input.siteId })
  await sitePolicy(deps, input.siteId)
  await checkAreas(deps, input.siteId, input.areaIds)
  const now = deps.clock.now()
  const id = await deps.db.transaction().execute(async (trx) => {
    const taken = await repo.findSourceByName(trx, input.siteId, input.name)
    if (taken) throw conflict(`The site already has a source named "${input.name}"`, { fields: { name: ['Taken'] } })
    const row = await repo.insertSource(trx, {
      site_id: input.siteId,
      name: input.name,
      kind: input.kind,
      description: input.description,
      host: input.kind === 'modbus' ? input.host : null,
      port: input.kind === 'modbus' ? input.port : null,
      unit_id: input.kind === 'modbus' ? input.unitId : null,
      timeout_ms: input.timeoutMs,
      register_map: JSON.stringify(input.kind === 'modbus' ? input.registerMap : []),
      column_mapping: JSON.stringify(input.columnMapping),
      area_ids: JSON.stringify(input.areaIds),
      tolerances: JSON.stringify(input.tolerances),
      schedule_hours: input.scheduleHours,
      active: input.active,
      next_run_at: nextRunFor(input.kind, now, input.active),
      created_by: ctx.actorId,
      created_at: now,
      updated_at: now,
    })
    await appendAudit(trx, deps.clock, ctx, {
      action: 'reconciliation_source.create',
      entityType: 'ReconciliationSource',
      entityId: row.id,
      after: { ...input },
    })
    return row.id
  })
  return getSource(deps, ability, id)
}

export async function updateSource(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  patch: Partial<z.output<typeof UpdateSourceInputSchema>>,
): Promise<Source> {
  await deps.db.transaction().execute(async (trx) => {
    const s = allowedRow(await repo.lockSource(trx, id), ability, 'update', 'ReconciliationSource', 'Source')
    if (patch.version !== s.version)
      throw conflict('Somebody changed this source since you opened it: reload it and make your change again')
    if (patch.areaIds) await checkAreas(deps, s.site_id, patch.areaIds)
    const kind = s.kind
    const host = patch.host !== undefined ? patch.host : s.host
    const port = patch.port !== undefined ? patch.port : s.port
    const unitId = patch.unitId !== undefined ? patch.unitId : s.unit_id
    if (kind === 'modbus' && (host === null || port === null || unitId === null))
      throw validationFailed({ host: ['A Modbus device needs its address, port and unit id'] })
    const now = deps.clock.now()
    const set: Record<string, unknown> = { updated_at: now, version: s.version + 1 }
    if (patch.name !== undefined) set.name = patch.name
    if (patch.description !== undefined) set.description = patch.description
    if (kind === 'modbus') Object.assign(set, { host, port, unit_id: unitId })
    if (patch.timeoutMs !== undefined) set.timeout_ms = patch.timeoutMs
    if (patch.registerMap !== undefined) set.register_map = JSON.stringify(kind === 'modbus' ? patch.registerMap : [])
    if (patch.columnMapping !== undefined) set.column_mapping = JSON.stringify(patch.columnMapping)
    if (patch.areaIds !== undefined) set.area_ids = JSON.stringify(patch.areaIds)
    if (patch.tolerances !== undefined) set.tolerances = JSON.stringify(patch.tolerances)
    if (patch.scheduleHours !== undefined) set.schedule_hours = patch.scheduleHours
    if (patch.active !== undefined) set.active = patch.active
    if (patch.active === true || patch.registerMap || patch.host !== undefined || patch.port !== undefined)
      set.next_run_at = nextRunFor(kind, now, patch.active ?? s.active)
    if (patch.active === false) set.next_run_at = null
    if (patch.name !== undefined && patch.name !== s.name) {
      const taken = await repo.findSourceByName(trx, s.site_id, patch.name, id)
      if (taken) throw conflict(`The site already has a source named "${patch.name}"`, { fields: { name: ['Taken'] } })
    }
    await repo.updateSource(trx, id, set)
    const { version: _v, ...changed } = patch
    await appendAudit(trx, deps.clock, ctx, {
      action: 'reconciliation_source.update',
      entityType: 'ReconciliationSource',
      entityId: id,
      after: changed,
    })
  })
  return getSource(deps, ability, id)
}

/** Reads the device now and answers the decoded values; records nothing but the audit event. */
export async function readNow(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
): Promise<ReadNowResult> {
  const s = allowedRow(await repo.findSource(deps.db, id), ability, 'reconcile', 'ReconciliationSource', 'Source')
  if (s.kind !== 'modbus')
    throw invalidState('Only a live device can be read now; upload an export to this source instead')
  const map = RegisterMapSchema.parse(s.register_map)
  if (!map.length) throw invalidState('The device has no register map yet: add the registers to read first')
  const reading = await readDevice({ host: s.host!, port: s.port!, unitId: s.unit_id!, timeoutMs: s.timeout_ms }, map)
  const readAt = deps.clock.now()
  await deps.db.transaction().execute((trx) =>
    appendAudit(trx, deps.clock, ctx, {
      action: 'reconciliation_source.read',
      entityType: 'ReconciliationSource',
      entityId: id,
      after: { reachable: reading.reachable, values: reading.values.length },
    }),
  )
  return { reachable: reading.reachable, error: reading.error, readAt: readAt.toISOString(), values: reading.values }
}

/** Runs a live device's reconciliation now. */
export async function runNow(deps: AppDeps, ability: AppAbility, ctx: AuditContext, id: number): Promise<Run> {
  const s = allowedRow(await repo.findSource(deps.db, id), ability, 'reconcile', 'ReconciliationSource', 'Source')
  if (s.kind !== 'modbus')
    throw invalidState('An export source is reconciled by uploading its export; there is nothing to read now')
  return performRun(deps, ctx, id, 'manual', { kind: 'device' })
}

/** Export rows as observations: attribute names understood by their usual spellings, flags stated either way. */
export function exportObservations(
  rows: { values: string[] }[],
  keys: (ExportColumnKey | null)[],
): { observations: Observation[]; ignored: number; rows: number } {
  const col = (k: ExportColumnKey) => keys.indexOf(k)
  const [t, a, v, u] = [col('tag'), col('attribute'), col('value'), col('unit')]
  const observations: Observation[] = []
  let ignored = 0
  let count = 0
  for (const r of rows) {
    const tag = (r.values[t] ?? '').trim()
    const attrText = r.values[a] ?? ''
    if (!tag && !attrText.trim() && !(r.values[v] ?? '').trim()) continue
    count++
    const attr = attributeOf(attrText)
    if (!tag || !attr) {
      ignored++
      continue
    }
    let value = (r.values[v] ?? '').trim()
    if (attr.invert) {
      const low = value.toLowerCase()
      value = ['1', 'true', 'yes', 'y', 'on', 'x'].includes(low)
        ? '0'
        : ['0', 'false', 'no', 'n', 'off', ''].includes(low)
          ? '1'
          : value
    }
    observations.push({
      tag,
      attribute: attr.attribute,
      value,
      unit: u >= 0 ? (r.values[u] ?? '').trim() || null : null,
    })
  }
  return { observations, ignored, rows: count }
}

/**
 * Reads an uploaded export (CSV or XLSX, any column layout: the mapping sent, the layout's own headers, then the
 * mapping remembered for this source), remembers the mapping on the source and runs the reconciliation.
 */
export async function uploadExport(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  file: { buffer: Buffer; fileName: string },
  mapping: ExportMapping | undefined,
): Promise<Run & { mapping: Record<string, string>; ignoredColumns: string[] }> {
  const s = allowedRow(await repo.findSource(deps.db, id), ability, 'reconcile', 'ReconciliationSource', 'Source')
  if (s.kind !== 'export') throw invalidState('A live device is read, not uploaded: use "run now"')
  const table = await readTable(file.buffer)
  if (table.headers.every((h) => !h)) throw badFile('Row 1 must hold the column headers')
  const remembered = ExportMappingSchema.safeParse(s.column_mapping)
  const { keys, used, ignored } = resolveColumnMapping(
    table.headers,
    EXPORT_COLUMNS,
    EXPORT_REQUIRED_COLUMNS,
    mapping,
    remembered.success ? remembered.data : {},
    'map the export’s headers to Tag, Attribute and Value (and Unit if it has one)',
  )
  const parsed = exportObservations(table.rows, keys)
  if (!parsed.rows) throw badFile('The file has headers but no data rows')
  const merged = Object.entries({ ...(remembered.success ? remembered.data : {}), ...used }).slice(-200)
  await deps.db.transaction().execute(async (trx) => {
    await repo.updateSource(trx, id, { column_mapping: JSON.stringify(Object.fromEntries(merged)) })
  })
  const run = await performRun(deps, ctx, id, 'upload', {
    kind: 'export',
    observations: parsed.observations,
    rowsRead: parsed.rows,
    rowsIgnored: parsed.ignored,
    fileName: file.fileName.replace(/^.*[\\/]/, '').slice(0, 200) || 'upload',
    checksum: createHash('sha256').update(file.buffer).digest('hex'),
  })
  return { ...run, mapping: used, ignoredColumns: ignored }
}

/** The scheduled run of one due device (called by the job after it claimed the source). */
export function scheduledRun(deps: Pick<AppDeps, 'db' | 'clock' | 'config'>, id: number) {
  return performRun(deps, { actorId: null, requestId: 'job:reconciliation', ip: null }, id, 'schedule', {
    kind: 'device',
  })
}

export const nextScheduledRun = (now: Date, hours: number) => new Date(now.getTime() + hours * HOUR)

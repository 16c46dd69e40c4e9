// A reconciliation run: what a source holds (an uploaded export's rows, or a device read now) compared with the
// register, and the findings that follow (docs/reconciliation.md#runs).
import { type Difference, type Observation, normTag, reconcile } from '../../../shared/domain/reconcile.ts'
import { onAbsent, onSeenAgain } from '../../../shared/domain/rules/findings.ts'
import type { ListResult } from '../../../shared/schemas/common.ts'
import {
  type RegisterMapEntry,
  RegisterMapSchema,
  type Run,
  type RunTrigger,
  TolerancesSchema,
} from '../../../shared/schemas/reconciliation.ts'
import type { AppAbility } from '../../../shared/abilities/index.ts'
import { readableRow, scopeSites } from '../../authorize.ts'
import type { Clock } from '../../clock.ts'
import type { Config } from '../../config.ts'
import type { AppDeps } from '../../deps.ts'
import type { Db } from '../../db/index.ts'
import { notFound } from '../../errors.ts'
import { type AuditContext, appendAudit } from '../audit/audit.repository.ts'
import { mailNotice } from '../mail/mail.outbox.ts'
import { recipientsOf } from '../users/users.repository.ts'
import { observationsOf, readDevice } from './device-read.ts'
import * as repo from './reconciliation.repository.ts'

/** What a run compares: rows of an export, or the device named by the source. */
export type RunInput =
  | {
      kind: 'export'
      observations: Observation[]
      rowsRead: number
      rowsIgnored: number
      fileName: string
      checksum: string
    }
  | { kind: 'device' }

const findingKey = (tag: string, attribute: string, kind: string) => `${normTag(tag)}|${attribute}|${kind}`

export function toRun(r: repo.RunRow): Run {
  return {
    id: r.id,
    sourceId: r.source_id,
    sourceName: r.source_name,
    siteId: r.site_id,
    trigger: r.trigger,
    outcome: r.outcome,
    startedAt: r.started_at.toISOString(),
    finishedAt: r.finished_at.toISOString(),
    runBy: r.run_by_name ?? null,
    fileName: r.file_name,
    rowsRead: r.rows_read,
    rowsIgnored: r.rows_ignored,
    limitsCompared: r.limits_compared,
    attributesCompared: r.attributes_compared,
    differences: r.differences,
    findingsNew: r.findings_new,
    findingsReopened: r.findings_reopened,
    findingsResolved: r.findings_resolved,
    error: r.error,
  }
}

/**
 * Runs one reconciliation of a source and records it: the run, new / reopened / resolved findings, each compared
 * limit's last reconciliation, one digest mail to the site's safety engineers and shift supervisors when there is
 * anything new, and the audit event. A device that cannot be read gives an `unreachable` run and finding; nothing
 * else of the source changes then.
 */
export async function performRun(
  deps: { db: Db; clock: Clock; config: Config },
  ctx: AuditContext,
  sourceId: number,
  trigger: RunTrigger,
  input: RunInput,
): Promise<Run> {
  const { db, clock } = deps
  const started = clock.now()
  const source = await repo.findSource(db, sourceId)
  if (!source) throw notFound('Source')
  const map: RegisterMapEntry[] = RegisterMapSchema.parse(source.register_map)

  // the device is read outside any transaction: a slow device holds no lock
  let observations: Observation[] = []
  let unreachable: string | null = null
  let rowsRead = 0
  let rowsIgnored = 0
  let problemKeys = new Set<string>()
  if (input.kind === 'device') {
    const reading = await readDevice(
      { host: source.host ?? '', port: source.port ?? 0, unitId: source.unit_id ?? 0, timeoutMs: source.timeout_ms },
      map,
    )
    if (!reading.reachable) unreachable = reading.error ?? 'The device did not answer'
    observations = observationsOf(reading.values, map)
    rowsRead = reading.values.length
    rowsIgnored = reading.values.filter((v) => v.value === null).length
    problemKeys = new Set(reading.values.filter((v) => v.value === null).map((v) => `${normTag(v.tag)}|${v.attribute}`))
  } else {
    observations = input.observations
    rowsRead = input.rowsRead
    rowsIgnored = input.rowsIgnored
  }

  const runId = await db.transaction().execute(async (trx) => {
    const locked = await repo.lockSource(trx, sourceId)
    if (!locked) throw notFound('Source')
    const now = clock.now()
    const existing = await repo.findingsOfSource(trx, sourceId)
    const byKey = new Map(existing.map((f) => [findingKey(f.tag, f.attribute, f.kind), f]))
    const run = await repo.insertRun(trx, {
      source_id: sourceId,
      site_id: source.site_id,
      trigger,
      outcome: unreachable ? 'unreachable' : 'completed',
      started_at: started,
      finished_at: now,
      run_by: ctx.actorId,
      file_name: input.kind === 'export' ? input.fileName : null,
      checksum: input.kind === 'export' ? input.checksum : null,
      rows_read: rowsRead,
      rows_ignored: rowsIgnored,
      error: unreachable,
    })
    const counts = {
      limitsCompared: 0,
      attributesCompared: 0,
      differences: 0,
      newFindings: 0,
      reopened: 0,
      resolved: 0,
    }
    const news: { tag: string; text: string }[] = []

    const seeDifference = async (d: Omit<Difference, 'kind'> & { kind: Difference['kind'] | 'unreachable' }) => {
      const key = findingKey(d.tag, d.attribute, d.kind)
      // one finding per tag, attribute and kind, however often the source lists it
      if (handled.has(key)) return null
      handled.add(key)
      const f = byKey.get(key)
      byKey.delete(key)
      if (!f) {
        counts.newFindings++
        news.push({ tag: d.tag, text: `${d.tag}: ${d.detail}` })
        return {
          site_id: source.site_id,
          source_id: sourceId,
          limit_id: d.limitId,
          tag: d.tag,
          attribute: d.attribute,
          kind: d.kind,
          register_value: d.registerValue,
          device_value: d.deviceValue,
          unit: d.unit,
          detail: d.detail,
          first_run_id: run.id,
          last_run_id: run.id,
          first_seen_at: now,
          last_seen_at: now,
          opened_at: now,
        }
      }
      const outcome = onSeenAgain(
        {
          state: f.state,
          kind: f.kind,
          present: f.present,
          deviceValue: f.device_value,
          changeRequestId: f.change_request_id,
        },
        d.deviceValue,
      )
      const seen = {
        limit_id: d.limitId,
        register_value: d.registerValue,
        device_value: d.deviceValue,
        unit: d.unit,
        detail: d.detail,
        present: true,
        last_run_id: run.id,
        last_seen_at: now,
      }
      if (outcome === 'reopen') {
        counts.reopened++
        news.push({ tag: d.tag, text: `${d.tag} (reopened): ${d.detail}` })
        await repo.updateFinding(trx, f.id, {
          ...seen,
          state: 'open',
          opened_at: now,
          reopen_count: f.reopen_count + 1,
          acknowledged_by: null,
          acknowledged_at: null,
          change_request_id: null,
          resolution: null,
          resolved_by: null,
          resolved_at: null,
          resolved_run_id: null,
          accept_reason: null,
        })
      } else if (
        !f.present ||
        f.device_value !== d.deviceValue ||
        f.register_value !== d.registerValue ||
        f.detail !== d.detail ||
        f.limit_id !== d.limitId
      ) {
        await repo.updateFinding(trx, f.id, seen)
      }
      return null
    }
    const handled = new Set<string>()
    const inserts: Parameters<typeof repo.insertFindings>[1] = []

    if (unreachable) {
      const row = await seeDifference({
        kind: 'unreachable',
        limitId: null,
        tag: '',
        attribute: '',
        registerValue: null,
        deviceValue: null,
        unit: null,
        detail: `The source could not be read: ${unreachable}.`,
      })
      if (row) inserts.push(row)
      // nothing was compared: every other finding of the source stays as it is
      byKey.clear()
    } else {
      const limits = await repo.loadRegisterLimits(trx, source.site_id)
      const areaIds = new Set(source.area_ids)
      const expected = new Set(
        limits.filter((l) => l.status === 'active' && areaIds.has(l.areaId)).map((l) => l.limitId),
      )
      const result = reconcile({
        limits,
        observations,
        expectedLimitIds: expected,
        pending: await repo.loadPendingChanges(trx, source.site_id),
        tolerances: TolerancesSchema.parse(source.tolerances),
      })
      counts.limitsCompared = result.limitsCompared
      counts.attributesCompared = result.attributesCompared
      counts.differences = result.differences.length
      for (const d of result.differences) {
        const row = await seeDifference(d)
        if (row) inserts.push(row)
      }
      for (const p of result.problems) problemKeys.add(`${normTag(p.tag)}|${p.attribute}`)
      const explaining = new Map(result.explained.map((e) => [`${e.limitId}|${e.attribute}`, e.changeRequestId]))
      // findings not seen again: resolved when open (unless their value could not be read or compared)
      const absent: number[] = []
      for (const f of byKey.values()) {
        if (problemKeys.has(`${normTag(f.tag)}|${f.attribute}`)) continue
        const explainedBy = f.limit_id !== null ? (explaining.get(`${f.limit_id}|${f.attribute}`) ?? null) : null
        const outcome = onAbsent(
          {
            state: f.state,
            kind: f.kind,
            present: f.present,
            deviceValue: f.device_value,
            changeRequestId: f.change_request_id,
          },
          explainedBy,
        )
        if (outcome === 'stays') {
          if (f.present) absent.push(f.id)
          continue
        }
        counts.resolved++
        await repo.updateFinding(trx, f.id, {
          state: 'resolved',
          present: false,
          resolution: outcome === 'resolve_by_change_request' ? 'change_request' : 'device_corrected',
          change_request_id: f.change_request_id ?? explainedBy,
          resolved_at: now,
          resolved_by: null,
          resolved_run_id: run.id,
        })
      }
      await repo.markAbsent(trx, absent)
      await repo.upsertLimitReconciliations(
        trx,
        result.limits.map((l) => ({
          limit_id: l.limitId,
          source_id: sourceId,
          run_id: run.id,
          at: now,
          matched: l.matched,
          differences: JSON.stringify(l.differences),
        })),
      )
    }
    await repo.insertFindings(trx, inserts)
    await repo.updateRun(trx, run.id, {
      limits_compared: counts.limitsCompared,
      attributes_compared: counts.attributesCompared,
      differences: counts.differences,
      findings_new: counts.newFindings,
      findings_reopened: counts.reopened,
      findings_resolved: counts.resolved,
    })
    if (news.length) {
      const people = await recipientsOf(trx, source.site_id, 'reconciliationFindings')
      const lines = news.slice(0, 50).map((n) => `• ${n.text}`)
      if (news.length > 50) lines.push(`… and ${news.length - 50} more.`)
      await mailNotice(trx, clock, people, {
        subject: `Reconciliation: ${news.length} new finding(s) on ${source.name}`,
        topic: 'reconciliation',
        paragraphs: [
          `Reconciliation of "${source.name}" at ${now.toISOString()} found ${news.length} ` +
            'new or reopened difference(s) between the register and the plant:',
          lines.join('\n'),
          'A difference may mean the register is wrong or the device is. ' +
            'Nobody changes a device from Limitkeeper: corrections go through the plant’s own procedures, ' +
            'a register change through management of change.',
        ],
        link: { url: `${deps.config.appUrl}/findings?sourceId=${sourceId}`, label: 'Open the findings' },
      })
    }
    await appendAudit(trx, clock, ctx, {
      action: 'reconciliation.run',
      entityType: 'ReconciliationRun',
      entityId: run.id,
      after: { sourceId, trigger, outcome: unreachable ? 'unreachable' : 'completed', ...counts },
    })
    return run.id
  })
  return toRun((await repo.findRun(db, runId))!)
}

export async function listRuns(
  deps: AppDeps,
  ability: AppAbility,
  user: { roles: { siteId: number }[] },
  q: { siteId?: number[]; sourceId?: number[]; page: number; pageSize: number },
): Promise<ListResult<Run>> {
  void ability
  const siteIds = scopeSites(user, q.siteId)
  const { rows, total } = await repo.listRuns(
    deps.db,
    { siteIds, sourceIds: q.sourceId },
    {
      limit: q.pageSize,
      offset: (q.page - 1) * q.pageSize,
    },
  )
  return { items: rows.map(toRun), total }
}

export async function getRun(deps: AppDeps, ability: AppAbility, id: number): Promise<Run> {
  const r = readableRow(await repo.findRun(deps.db, id), ability, 'ReconciliationSource', 'Run')
  return toRun(r)
}

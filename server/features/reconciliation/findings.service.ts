// Findings: differences between the register and the plant, owned and closed on record
// (docs/reconciliation.md#findings). The rule book is shared/domain/rules/findings.ts.
import { subject } from '@casl/ability'
import type { z } from 'zod'
import type { AppAbility } from '../../../shared/abilities/index.ts'
import { type FindingActor, findingVerdict, findingVerdicts } from '../../../shared/domain/rules/findings.ts'
import type { ListResult } from '../../../shared/schemas/common.ts'
import {
  type AcceptInputSchema,
  FINDING_KINDS,
  type Finding,
  type FindingFigures,
  type FindingListQuery,
  type LimitReconciliation,
} from '../../../shared/schemas/reconciliation.ts'
import { readableRow, scopeSites } from '../../authorize.ts'
import type { AppDeps } from '../../deps.ts'
import { conflict, enforce, invalidState, unprocessable } from '../../errors.ts'
import { type AuditContext, appendAudit } from '../audit/audit.repository.ts'
import { verifySignaturePassword } from '../session/session.service.ts'
import { contentHash, signAs, listSignatures } from '../signatures/signatures.ts'
import * as repo from './reconciliation.repository.ts'

const DAY = 86_400_000

function actorOf(ability: AppAbility, siteId: number): FindingActor {
  return {
    isSafetyEngineer: ability.can('update', subject('Finding', { siteId }) as never),
    mayAccept: ability.can('accept', subject('Finding', { siteId }) as never),
  }
}

const recordOf = (f: repo.FindingRow | repo.FindingView) => ({
  state: f.state,
  kind: f.kind,
  present: f.present,
  deviceValue: f.device_value,
  changeRequestId: f.change_request_id,
})

/** What an acceptance signs: the difference as it stands and the reason. */
const signedContent = (f: repo.FindingRow | repo.FindingView, reason: string) => ({
  findingId: f.id,
  tag: f.tag,
  attribute: f.attribute,
  kind: f.kind,
  registerValue: f.register_value,
  deviceValue: f.device_value,
  unit: f.unit,
  reason,
})

async function toFindings(deps: AppDeps, ability: AppAbility, rows: repo.FindingView[]): Promise<Finding[]> {
  const sigs = await listSignatures(
    deps.db,
    'Finding',
    rows.map((r) => r.id),
  )
  return rows.map((f) => ({
    id: f.id,
    siteId: f.site_id,
    sourceId: f.source_id,
    sourceName: f.source_name,
    sourceKind: f.source_kind,
    limitId: f.limit_id,
    tag: f.tag,
    attribute: f.attribute,
    kind: f.kind,
    state: f.state,
    registerValue: f.register_value,
    deviceValue: f.device_value,
    unit: f.unit,
    detail: f.detail,
    present: f.present,
    firstSeenAt: f.first_seen_at.toISOString(),
    lastSeenAt: f.last_seen_at.toISOString(),
    openedAt: f.opened_at.toISOString(),
    reopenCount: f.reopen_count,
    acknowledgedBy: f.ack_name,
    acknowledgedAt: f.acknowledged_at?.toISOString() ?? null,
    changeRequestId: f.change_request_id,
    resolution: f.resolution,
    resolvedBy: f.res_name,
    resolvedAt: f.resolved_at?.toISOString() ?? null,
    acceptReason: f.accept_reason,
    signatures: sigs
      .filter((s) => s.entity_id === f.id && !s.voided_at)
      .map((s) => ({
        name: s.name,
        meaning: s.meaning,
        at: s.at.toISOString(),
        matchesContent: s.content_hash === contentHash(signedContent(f, f.accept_reason ?? '')),
      })),
    version: f.version,
    actions: findingVerdicts(recordOf(f), actorOf(ability, f.site_id)),
  }))
}

export async function listFindings(
  deps: AppDeps,
  ability: AppAbility,
  user: { roles: { siteId: number }[] },
  q: FindingListQuery,
): Promise<ListResult<Finding>> {
  const { rows, total } = await repo.listFindings(
    deps.db,
    {
      siteIds: scopeSites(user, q.siteId),
      sourceIds: q.sourceId,
      limitIds: q.limitId,
      kinds: q.kind,
      states: q.state,
      q: q.q,
    },
    { limit: q.pageSize, offset: (q.page - 1) * q.pageSize },
  )
  return { items: await toFindings(deps, ability, rows), total }
}

export async function getFinding(deps: AppDeps, ability: AppAbility, id: number): Promise<Finding> {
  const f = readableRow(await repo.findFinding(deps.db, id), ability, 'Finding')
  return (await toFindings(deps, ability, [f]))[0]
}

async function locked(
  deps: AppDeps,
  trx: Parameters<typeof repo.lockFinding>[0],
  ability: AppAbility,
  id: number,
  version: number,
) {
  const f = readableRow(await repo.lockFinding(trx, id), ability, 'Finding')
  if (f.version !== version)
    throw conflict('The finding changed since you opened it (a run or a colleague): reload it and try again')
  void deps
  return f
}

/** A safety engineer takes ownership of the finding. */
export async function acknowledgeFinding(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  version: number,
): Promise<Finding> {
  await deps.db.transaction().execute(async (trx) => {
    const f = await locked(deps, trx, ability, id, version)
    enforce(findingVerdict(recordOf(f), actorOf(ability, f.site_id), 'acknowledge'))
    const now = deps.clock.now()
    await repo.updateFinding(trx, id, { state: 'acknowledged', acknowledged_by: ctx.actorId, acknowledged_at: now })
    await appendAudit(trx, deps.clock, ctx, {
      action: 'finding.acknowledge',
      entityType: 'Finding',
      entityId: id,
      before: { state: f.state },
      after: { state: 'acknowledged' },
    })
  })
  return getFinding(deps, ability, id)
}

/**
 * Links the change request that brings the register to what the plant holds. The finding is resolved by the first
 * reconciliation that no longer sees the difference (once the change is implemented).
 */
export async function linkChangeRequest(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  input: { version: number; changeRequestId: number },
): Promise<Finding> {
  await deps.db.transaction().execute(async (trx) => {
    const f = await locked(deps, trx, ability, id, input.version)
    enforce(findingVerdict(recordOf(f), actorOf(ability, f.site_id), 'linkChange'))
    const cr = await repo.findChangeRequestFor(trx, input.changeRequestId, f.limit_id)
    if (!cr || cr.site_id !== f.site_id)
      throw unprocessable('No change request with this number at the finding’s site', {
        fields: { changeRequestId: ['Not found at this site'] },
      })
    if (!cr.onLimit)
      throw unprocessable(`Change request #${cr.id} does not change ${f.tag}`, {
        fields: { changeRequestId: [`It has no item on ${f.tag}`] },
      })
    if (['rejected', 'withdrawn'].includes(cr.status))
      throw invalidState(`Change request #${cr.id} is ${cr.status}; link one that is still going ahead`)
    await repo.updateFinding(trx, id, { change_request_id: cr.id })
    await appendAudit(trx, deps.clock, ctx, {
      action: 'finding.link_change',
      entityType: 'Finding',
      entityId: id,
      after: { changeRequestId: cr.id },
    })
  })
  return getFinding(deps, ability, id)
}

/** Accepts the difference as it stands, with a reason and an electronic signature. */
export async function acceptFinding(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  input: z.output<typeof AcceptInputSchema>,
): Promise<Finding> {
  const before = readableRow(await repo.findFinding(deps.db, id), ability, 'Finding')
  // role and state first (403/409, nothing written), then the slow password check, then the locked transaction
  enforce(findingVerdict(recordOf(before), actorOf(ability, before.site_id), 'accept'))
  const signer = await verifySignaturePassword(deps, ctx.actorId!, input.password, ctx, {
    entityType: 'Finding',
    entityId: id,
  })
  await deps.db.transaction().execute(async (trx) => {
    const f = await locked(deps, trx, ability, id, input.version)
    enforce(findingVerdict(recordOf(f), actorOf(ability, f.site_id), 'accept'))
    const now = deps.clock.now()
    await repo.updateFinding(trx, id, {
      state: 'accepted',
      resolution: 'accepted',
      resolved_by: signer.id,
      resolved_at: now,
      accept_reason: input.reason,
    })
    await signAs(trx, deps.clock, signer, {
      entityType: 'Finding',
      entityId: id,
      meaning: 'accepted',
      contentHash: contentHash(signedContent(f, input.reason)),
      comment: input.reason,
    })
    await appendAudit(trx, deps.clock, ctx, {
      action: 'finding.accept',
      entityType: 'Finding',
      entityId: id,
      before: { state: f.state },
      after: { state: 'accepted', reason: input.reason },
    })
  })
  return getFinding(deps, ability, id)
}

/** Open findings by kind and age, and changes without MOC per month (first seen; target 0). */
export async function findingFigures(
  deps: AppDeps,
  user: { roles: { siteId: number }[] },
  q: { siteId?: number[]; months: number },
): Promise<FindingFigures> {
  const siteIds = scopeSites(user, q.siteId)
  const now = deps.clock.now()
  const open = siteIds.length ? await repo.openFindingsForFigures(deps.db, siteIds) : []
  const openByKindAndAge = FINDING_KINDS.map((kind) => {
    const ages = open.filter((f) => f.kind === kind).map((f) => now.getTime() - f.opened_at.getTime())
    return {
      kind,
      under7d: ages.filter((a) => a < 7 * DAY).length,
      under30d: ages.filter((a) => a >= 7 * DAY && a < 30 * DAY).length,
      over30d: ages.filter((a) => a >= 30 * DAY).length,
      total: ages.length,
    }
  })
  const first = new Date(Date.UTC(now.getUTCFullYear(), now.getUTCMonth() - q.months + 1, 1))
  const seen = siteIds.length ? await repo.changesWithoutMocSince(deps.db, siteIds, first) : []
  const months: { month: string; count: number }[] = []
  for (let i = 0; i < q.months; i++) {
    const d = new Date(Date.UTC(first.getUTCFullYear(), first.getUTCMonth() + i, 1))
    const month = d.toISOString().slice(0, 7)
    months.push({ month, count: seen.filter((s) => s.first_seen_at.toISOString().slice(0, 7) === month).length })
  }
  return { openByKindAndAge, changesWithoutMocPerMonth: months, target: 0 }
}

/** A limit's last reconciliation per source. */
export async function limitReconciliations(
  deps: AppDeps,
  ability: AppAbility,
  limitId: number,
): Promise<LimitReconciliation[]> {
  readableRow(await repo.findLimitSite(deps.db, limitId), ability, 'Limit')
  const rows = await repo.limitReconciliations(deps.db, limitId)
  return rows.map((r) => ({
    sourceId: r.source_id,
    sourceName: r.name,
    runId: r.run_id,
    at: r.at.toISOString(),
    matched: r.matched,
    differences: r.differences,
  }))
}

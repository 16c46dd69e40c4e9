import type { AppAbility } from '../../../shared/abilities/index.ts'
import { isOverdue } from '../../../shared/domain/rules/alarm-states.ts'
import { acceptVerdict, handOverVerdict } from '../../../shared/domain/rules/shift-handover.ts'
import type {
  AreaProtection,
  HandoverAlarmState,
  HandOverInput,
  HandoverSnapshot,
  ShiftHandoverDto,
  ShiftHandoverState,
} from '../../../shared/schemas/shift-handover.ts'
import { ensureVisible, readableRow } from '../../authorize.ts'
import type { AppDeps } from '../../deps.ts'
import { enforce, notFound, validationFailed } from '../../errors.ts'
import { type AuditContext, appendAudit } from '../audit/audit.repository.ts'
import { loadBypasses } from '../bypasses/bypasses.service.ts'
import { verifySignaturePassword } from '../session/session.service.ts'
import { contentHash, insertSignature, listSignatures } from '../signatures/signatures.ts'
import { openDeferrals, overdueRepairs } from '../trip-tests/trip-tests.service.ts'
import * as repo from './shift-handover.repository.ts'

type Q = Parameters<typeof repo.findAreas>[0]
const ENTITY = 'ShiftHandover'

/** The areas asked for, all of one site (404 for a missing one, 422 for areas of several sites). */
async function areasOf(db: Q, areaIds: number[]) {
  const ids = [...new Set(areaIds)].sort((a, b) => a - b)
  const areas = await repo.findAreas(db, ids)
  if (areas.length !== ids.length) throw notFound('Area')
  if (new Set(areas.map((a) => a.site_id)).size > 1)
    throw validationFailed({ areaIds: ['Hand over areas of one site at a time'] })
  return { ids, areas, site: { id: areas[0].site_id, name: areas[0].site_name, timeZone: areas[0].time_zone } }
}

/**
 * The state of protection of the areas now, as the handover shows and signs it: per area what is bypassed (or on its
 * way), degraded (with a passed repair deadline marked), overdue for test or never tested, the test deferrals requested
 * or in force, the open temporary changes and the alarms shelved, suppressed or out of service (those of tags the
 * register does not hold under the site, in every handover of it). It holds no running figures (no
 * "bypassed for 3.2 h"), so its hash changes when the state changes, not when it is read.
 */
async function liveSnapshot(deps: AppDeps, db: Q, areaIds: number[]) {
  const now = deps.clock.now()
  const { ids, areas, site } = await areasOf(db, areaIds)
  const [bypassRows, degraded, tests, repairsPassed, deferrals, alarmRows] = await Promise.all([
    repo.findOpenBypassIds(db, ids),
    repo.findDegraded(db, ids),
    repo.findOverdueTests(db, ids),
    overdueRepairs(db, [site.id], now),
    openDeferrals(db, [site.id], now),
    repo.findActiveAlarmStates(db, site.id),
  ])
  const alarmStates = (areaId: number | null): HandoverAlarmState[] =>
    alarmRows
      .filter((a) => a.area_id === areaId)
      .map((a) => ({
        id: a.id,
        tag: a.tag,
        kind: a.kind,
        reason: a.reason,
        startedBy: a.display_name,
        until: a.until.toISOString(),
        overdue: isOverdue({ status: 'active', until: a.until }, now),
        signed: a.signature_id !== null,
      }))
  // a key present only when it holds something, so the hash of a state without any is what it was before the key
  const some = <K extends string>(key: K, list: HandoverAlarmState[]) =>
    (list.length ? { [key]: list } : {}) as Partial<Record<K, HandoverAlarmState[]>>
  const repairPassed = new Set(repairsPassed.map((r) => r.limitId))
  const bypasses = await loadBypasses(
    deps,
    bypassRows.map((r) => r.id),
    db,
  )
  const perArea: AreaProtection[] = []
  for (const area of [...areas].sort((a, b) => a.id - b.id)) {
    const temporary = await repo.findOpenTemporaryChanges(db, site.id, area.id, now)
    perArea.push({
      area: { id: area.id, name: area.name },
      bypasses: bypasses
        .filter((b) => b.areaId === area.id)
        .map((b) => ({
          id: b.id,
          limitId: b.limitId,
          limitTag: b.limitTag,
          channelTag: b.channelTag,
          status: b.status,
          overdue: b.overdue,
          plannedStart: b.plannedStart,
          plannedEnd: b.plannedEnd,
          lapsesAt: b.lapsesAt,
          compensatingMeasures: b.compensatingMeasures,
          reason: b.reason,
        })),
      degraded: degraded
        .filter((d) => d.area_id === area.id)
        .map((d) => ({
          limitId: d.limitId,
          tag: d.tag,
          since: d.opened_at.toISOString(),
          reasons: d.reasons,
          compensatingMeasures: d.compensating_measures,
          repairDeadline: d.repair_deadline,
          measuresSignedBy: d.display_name,
          repairDeadlinePassed: repairPassed.has(d.limitId),
        })),
      overdueTests: tests
        .filter((t) => t.area_id === area.id)
        .map((t) => ({ limitId: t.id, tag: t.tag, testStatus: t.test_status, dueDate: t.test_due_date, sil: t.sil })),
      temporaryChanges: temporary.map((c) => ({
        id: c.id,
        title: c.title,
        status: c.status,
        expiresAt: c.expires_at?.toISOString() ?? null,
        // present only when true, so the hash of a state without one is what it was before the key existed
        ...(c.expired_to_revert ? { expiredToRevert: true } : {}),
      })),
      deferrals: deferrals.filter((d) => d.areaId === area.id).map(({ areaId: _a, ...d }) => d),
      ...some('alarmStates', alarmStates(area.id)),
    })
  }
  const snapshot: HandoverSnapshot = { site, areas: perArea, ...some('alarmStatesWithoutArea', alarmStates(null)) }
  return { ids, snapshot, stateHash: contentHash(snapshot) }
}

/** What both supervisors sign: the areas, the state shown and the notes. */
const signedContent = (areaIds: number[], snapshot: HandoverSnapshot, notes: string) =>
  contentHash({ areaIds, snapshot, notes })

async function toDtos(deps: AppDeps, db: Q, ids: number[]): Promise<ShiftHandoverDto[]> {
  const rows = await repo.selectHandovers(db, ids)
  const sigs = (await listSignatures(db, ENTITY, ids)).filter((s) => !s.voided_at)
  const live = new Map<string, string>()
  const out: ShiftHandoverDto[] = []
  for (const r of rows) {
    const key = r.area_ids.join(',')
    if (!live.has(key)) live.set(key, (await liveSnapshot(deps, db, r.area_ids)).stateHash)
    out.push({
      id: r.id,
      siteId: r.site_id,
      areaIds: r.area_ids,
      status: r.status,
      notes: r.notes,
      snapshot: r.snapshot,
      stateHash: r.state_hash,
      contentHash: r.content_hash,
      handedOverBy: { id: r.handed_over_by, name: r.handed_over_name },
      handedOverAt: r.handed_over_at.toISOString(),
      acceptedBy: r.accepted_by && r.accepted_name ? { id: r.accepted_by, name: r.accepted_name } : null,
      acceptedAt: r.accepted_at?.toISOString() ?? null,
      signatures: sigs
        .filter((s) => s.entity_id === r.id)
        .map((s) => ({
          id: s.id,
          name: s.name,
          meaning: s.meaning,
          at: s.at.toISOString(),
          contentHash: s.content_hash,
        })),
      stateUnchanged: live.get(key) === r.state_hash,
    })
  }
  return ids.map((id) => out.find((d) => d.id === id)).filter((d): d is ShiftHandoverDto => Boolean(d))
}

/** The live state of protection of the areas, with the handovers waiting for acceptance and the last ones. */
export async function handoverState(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  areaIds: number[],
): Promise<ShiftHandoverState> {
  const { ids, snapshot, stateHash } = await liveSnapshot(deps, deps.db, areaIds)
  ensureVisible(ability, 'ShiftHandover', { siteId: snapshot.site.id }, 'Area')
  const [pendingIds, recentIds] = await Promise.all([
    repo.findHandoverIds(deps.db, ids, { status: 'handed_over', limit: 10 }),
    repo.findHandoverIds(deps.db, ids, { limit: 10 }),
  ])
  const dtos = await toDtos(deps, deps.db, [...new Set([...pendingIds, ...recentIds])])
  const byId = (id: number) => dtos.find((d) => d.id === id)!
  return {
    ...snapshot,
    asOf: deps.clock.now().toISOString(),
    stateHash,
    pending: pendingIds.map(byId),
    recent: recentIds.map(byId),
    actions: { handOver: handOverVerdict({ siteId: snapshot.site.id }, { id: ctx.actorId ?? -1, ability }) },
  }
}

export async function getHandover(deps: AppDeps, ability: AppAbility, id: number): Promise<ShiftHandoverDto> {
  const [dto] = await toDtos(deps, deps.db, [id])
  return readableRow(dto, ability, 'ShiftHandover', 'Shift handover')
}

/**
 * The outgoing shift supervisor hands over the areas in the state they were shown (`stateHash`), with their notes,
 * signing the hash of both. A handover of the same areas still waiting for acceptance is replaced.
 */
export async function handOver(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  input: HandOverInput,
): Promise<ShiftHandoverDto> {
  const actor = { id: ctx.actorId ?? -1, ability }
  const pre = await liveSnapshot(deps, deps.db, input.areaIds)
  ensureVisible(ability, 'ShiftHandover', { siteId: pre.snapshot.site.id }, 'Area')
  enforce(
    handOverVerdict({ siteId: pre.snapshot.site.id }, actor, { shownHash: input.stateHash, liveHash: pre.stateHash }),
  )
  const signer = await verifySignaturePassword(deps, actor.id, input.password, ctx, {
    entityType: 'Area',
    entityId: pre.ids.join(','),
  })
  const id = await deps.db.transaction().execute(async (trx) => {
    const { ids, snapshot, stateHash } = await liveSnapshot(deps, trx, input.areaIds)
    enforce(handOverVerdict({ siteId: snapshot.site.id }, actor, { shownHash: input.stateHash, liveHash: stateHash }))
    const hash = signedContent(ids, snapshot, input.notes)
    const now = deps.clock.now()
    const id = await repo.insertHandover(trx, {
      siteId: snapshot.site.id,
      areaIds: ids,
      notes: input.notes,
      snapshot,
      stateHash,
      contentHash: hash,
      by: signer.id,
      at: now,
    })
    const superseded = await repo.supersedePending(trx, ids, id)
    await insertSignature(trx, deps.clock, {
      entityType: ENTITY,
      entityId: id,
      userId: signer.id,
      name: signer.name,
      meaning: 'acknowledged',
      contentHash: hash,
      comment: 'handed over',
    })
    await appendAudit(trx, deps.clock, ctx, {
      action: 'shift_handover.hand_over',
      entityType: ENTITY,
      entityId: id,
      after: {
        areaIds: ids,
        contentHash: hash,
        notes: input.notes,
        superseded,
        bypasses: snapshot.areas.reduce((n, a) => n + a.bypasses.length, 0),
        degraded: snapshot.areas.reduce((n, a) => n + a.degraded.length, 0),
        overdueTests: snapshot.areas.reduce((n, a) => n + a.overdueTests.length, 0),
      },
    })
    return id
  })
  return getHandover(deps, ability, id)
}

/** The incoming shift supervisor accepts the handover they were shown (`contentHash`), signing the same hash. */
export async function acceptHandover(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  input: { contentHash: string; password: string },
): Promise<ShiftHandoverDto> {
  const actor = { id: ctx.actorId ?? -1, ability }
  const facts = (h: ShiftHandoverDto) => ({
    siteId: h.siteId,
    status: h.status,
    handedOverById: h.handedOverBy.id,
    contentHash: h.contentHash,
    stateUnchanged: h.stateUnchanged,
  })
  const pre = await getHandover(deps, ability, id)
  enforce(acceptVerdict(facts(pre), actor, input.contentHash))
  const signer = await verifySignaturePassword(deps, actor.id, input.password, ctx, {
    entityType: ENTITY,
    entityId: id,
  })
  await deps.db.transaction().execute(async (trx) => {
    if (!(await repo.lockHandover(trx, id))) throw notFound('Shift handover')
    const [h] = await toDtos(deps, trx, [id])
    enforce(acceptVerdict(facts(h), actor, input.contentHash))
    const now = deps.clock.now()
    await repo.markAccepted(trx, id, signer.id, now)
    await insertSignature(trx, deps.clock, {
      entityType: ENTITY,
      entityId: id,
      userId: signer.id,
      name: signer.name,
      meaning: 'accepted',
      contentHash: h.contentHash,
    })
    await appendAudit(trx, deps.clock, ctx, {
      action: 'shift_handover.accept',
      entityType: ENTITY,
      entityId: id,
      after: { areaIds: h.areaIds, contentHash: h.contentHash, handedOverBy: h.handedOverBy.name },
    })
  })
  return getHandover(deps, ability, id)
}

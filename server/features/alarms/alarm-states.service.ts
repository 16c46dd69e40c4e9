import type { AppAbility } from '../../../shared/abilities/index.ts'
import { alarmStateVerdicts, isOverdue, mayStart } from '../../../shared/domain/rules/alarm-states.ts'
import type { AlarmState, AlarmStateInput } from '../../../shared/schemas/alarms.ts'
import type { ListResult } from '../../../shared/schemas/common.ts'
import type { Role } from '../../../shared/schemas/users.ts'
import { allowedRow, authorize, readableRow, scopeSites } from '../../authorize.ts'
import type { AppDeps } from '../../deps.ts'
import { enforce, validationFailed } from '../../errors.ts'
import type { CurrentUser } from '../../types/express.d.ts'
import { type AuditContext, appendAudit } from '../audit/audit.repository.ts'
import { verifySignaturePassword } from '../session/session.service.ts'
import { contentHash, signAs } from '../signatures/signatures.ts'
import { sitePolicy } from './alarm-figures.service.ts'
import * as repo from './alarms.repository.ts'

// The register of alarm states: shelved, suppressed by design, out of service (who, why, when, until). The rule book
// shared/domain/rules/alarm-states.ts decides every action. Kept apart from SIS bypasses. docs/alarms.md.

const rolesAt = (user: CurrentUser, siteId: number): Role[] =>
  user.roles.filter((r) => r.siteId === siteId).map((r) => r.role)

function toDto(r: NonNullable<repo.AlarmStateRow>, user: CurrentUser, now: Date): AlarmState {
  const verdicts = alarmStateVerdicts(
    { kind: r.kind, status: r.status, until: r.until, startedBy: r.started_by },
    { userId: user.id, roles: rolesAt(user, r.site_id) },
  )
  return {
    id: r.id,
    siteId: r.site_id,
    limitId: r.limit_id,
    tag: r.tag,
    kind: r.kind,
    status: r.status,
    reason: r.reason,
    startedBy: { id: r.started_by, name: r.started_by_name },
    startedAt: r.started_at.toISOString(),
    until: r.until.toISOString(),
    overdue: isOverdue({ status: r.status, until: r.until }, now),
    signed: r.signature_id !== null,
    changeRequestId: r.change_request_id,
    endedBy: r.ended_by !== null ? { id: r.ended_by, name: r.ended_by_name ?? '' } : null,
    endedAt: r.ended_at ? r.ended_at.toISOString() : null,
    endNote: r.end_note,
    actions: verdicts,
  }
}

/** A safety-related alarm: marked so in its rationalization, or its limit is a trip, has a SIL or is critical. */
function safetyRelated(
  limit:
    { limit_class: string; sil: number | null; priority: string | null; safety_related_alarm: boolean } | undefined,
) {
  return (
    !!limit &&
    (limit.safety_related_alarm || limit.limit_class === 'trip' || limit.sil !== null || limit.priority === 'critical')
  )
}

export async function startAlarmState(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  user: CurrentUser,
  input: AlarmStateInput,
): Promise<AlarmState> {
  const { alarms } = await sitePolicy(deps, input.siteId)
  authorize(ability, 'create', 'AlarmState', { siteId: input.siteId })
  const limit = await repo.limitForTag(deps.db, input.siteId, input.tag)
  if (input.changeRequestId) {
    const crSite = await repo.changeRequestSite(deps.db, input.changeRequestId)
    if (crSite !== input.siteId)
      throw validationFailed(
        { changeRequestId: ['No such change request at this site'] },
        'No such change request at this site',
      )
  }
  const request = {
    kind: input.kind,
    priority: limit?.priority ?? null,
    safetyRelated: safetyRelated(limit),
    hours: input.hours,
    signed: !!input.password,
    changeRequestId: input.changeRequestId ?? null,
  }
  const actor = { userId: user.id, roles: rolesAt(user, input.siteId) }
  // role and policy first (403/422, nothing written), then the slow password check, then the locked transaction
  enforce(mayStart(request, actor, alarms, null))
  let signer: { id: number; name: string } | null = null
  if (input.password)
    signer = await verifySignaturePassword(deps, user.id, input.password, ctx, {
      entityType: 'alarm_state',
      entityId: input.tag,
      siteId: input.siteId,
    })
  const now = deps.clock.now()
  const until = new Date(now.getTime() + input.hours * 3_600_000)
  const id = await deps.db.transaction().execute(async (trx) => {
    const current = await repo.activeStateForTag(trx, input.siteId, input.tag)
    enforce(mayStart(request, actor, alarms, current ? { ...current, startedBy: current.started_by } : null))
    const id = await repo.insertState(trx, {
      siteId: input.siteId,
      limitId: limit?.id ?? null,
      tag: limit?.tag ?? input.tag,
      kind: input.kind,
      reason: input.reason,
      userId: user.id,
      now,
      until,
      changeRequestId: input.changeRequestId ?? null,
    })
    if (signer) {
      const sig = await signAs(trx, deps.clock, signer, {
        entityType: 'alarm_state',
        entityId: id,
        meaning: 'authorized',
        contentHash: contentHash({
          tag: input.tag,
          kind: input.kind,
          reason: input.reason,
          until: until.toISOString(),
        }),
      })
      await repo.setStateSignature(trx, id, sig.id)
    }
    await appendAudit(trx, deps.clock, ctx, {
      action: `alarm_state.${input.kind}`,
      entityType: 'alarm_state',
      entityId: id,
      after: { siteId: input.siteId, tag: input.tag, kind: input.kind, reason: input.reason, until, signed: !!signer },
    })
    return id
  })
  return toDto((await repo.stateById(deps.db, id))!, user, deps.clock.now())
}

export async function endAlarmState(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  user: CurrentUser,
  id: number,
  note: string,
): Promise<AlarmState> {
  allowedRow(await repo.stateById(deps.db, id), ability, 'update', 'AlarmState', 'Alarm state')
  await deps.db.transaction().execute(async (trx) => {
    const r = (await repo.lockState(trx, id))!
    enforce(
      alarmStateVerdicts(
        { kind: r.kind, status: r.status, until: r.until, startedBy: r.started_by },
        { userId: user.id, roles: rolesAt(user, r.site_id) },
      ).end,
    )
    const now = deps.clock.now()
    await repo.endState(trx, id, user.id, now, note)
    await appendAudit(trx, deps.clock, ctx, {
      action: `alarm_state.end`,
      entityType: 'alarm_state',
      entityId: id,
      before: { status: 'active' },
      after: { status: 'ended', note },
    })
  })
  return toDto((await repo.stateById(deps.db, id))!, user, deps.clock.now())
}

export async function listAlarmStates(
  deps: AppDeps,
  user: CurrentUser,
  q: { siteId?: number; status?: 'active' | 'ended'; overdue?: 'true' | 'false'; page: number; pageSize: number },
): Promise<ListResult<AlarmState>> {
  const now = deps.clock.now()
  const { rows, total } = await repo.listStates(deps.db, {
    siteIds: scopeSites(user, q.siteId ? [q.siteId] : undefined),
    status: q.status,
    overdueAt: q.overdue === 'true' ? now : undefined,
    page: q.page,
    pageSize: q.pageSize,
  })
  return { items: rows.map((r) => toDto(r, user, now)), total }
}

export async function getAlarmState(deps: AppDeps, ability: AppAbility, user: CurrentUser, id: number) {
  const r = readableRow(await repo.stateById(deps.db, id), ability, 'AlarmState', 'Alarm state')
  return toDto(r, user, deps.clock.now())
}

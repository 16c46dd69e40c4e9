import type { AppAbility } from '../../../shared/abilities/index.ts'
import { authorize } from '../../authorize.ts'
import type { AppDeps } from '../../deps.ts'
import { forbidden, notFound } from '../../errors.ts'
import { type AuditContext, appendAudit } from '../audit/audit.repository.ts'
import { verifySignaturePassword } from '../session/session.service.ts'
import { contentHash, insertSignature } from '../signatures/signatures.ts'
import { loadBypasses } from './bypasses.service.ts'

/**
 * The state of protection of one area for shift handover: what is bypassed, degraded or overdue for test, and which
 * temporary changes are open; with the last acknowledgements by incoming shift supervisors.
 */
export async function protectionState(deps: AppDeps, ability: AppAbility, areaId: number) {
  const area = await deps.db
    .selectFrom('area')
    .innerJoin('site', 'site.id', 'area.site_id')
    .select(['area.id', 'area.name', 'area.site_id', 'site.name as site_name', 'site.time_zone'])
    .where('area.id', '=', areaId)
    .executeTakeFirst()
  if (!area) throw notFound('Area')
  authorize(ability, 'read', 'Limit', { siteId: area.site_id })
  const now = deps.clock.now()
  const bypassIds = (
    await deps.db
      .selectFrom('bypass')
      .innerJoin('limit_function', 'limit_function.id', 'bypass.limit_id')
      .select('bypass.id')
      .where('limit_function.area_id', '=', areaId)
      .where('bypass.status', 'in', ['active', 'authorized', 'requested'])
      .orderBy('bypass.planned_end')
      .execute()
  ).map((r) => r.id)
  const bypasses = await loadBypasses(deps, bypassIds)
  const degraded = await deps.db
    .selectFrom('limit_degradation')
    .innerJoin('limit_function', 'limit_function.id', 'limit_degradation.limit_id')
    .leftJoin('app_user', 'app_user.id', 'limit_degradation.measures_signed_by')
    .select([
      'limit_function.id as limitId',
      'limit_function.tag',
      'limit_degradation.opened_at',
      'limit_degradation.reasons',
      'limit_degradation.compensating_measures',
      'limit_degradation.repair_deadline',
      'app_user.display_name',
    ])
    .where('limit_function.area_id', '=', areaId)
    .where('limit_degradation.cleared_at', 'is', null)
    .orderBy('limit_degradation.opened_at')
    .execute()
  const overdueTests = await deps.db
    .selectFrom('limit_function')
    .select(['id', 'tag', 'test_status', 'test_due_date', 'sil'])
    .where('area_id', '=', areaId)
    .where('status', '=', 'active')
    .where('test_status', 'in', ['overdue', 'never_tested'])
    .orderBy('test_due_date')
    .execute()
  const temporary = await deps.db
    .selectFrom('change_request')
    .select(['id', 'title', 'status', 'expires_at'])
    .where('site_id', '=', area.site_id)
    .where('type', '=', 'temporary')
    .where('status', 'in', ['approved', 'implemented', 'closed'])
    .where('expires_at', '>', now)
    .where((eb) =>
      eb.exists(
        eb
          .selectFrom('change_request_item')
          .innerJoin('limit_function', 'limit_function.id', 'change_request_item.limit_id')
          .select('change_request_item.id')
          .whereRef('change_request_item.change_request_id', '=', 'change_request.id')
          .where('limit_function.area_id', '=', areaId),
      ),
    )
    .orderBy('expires_at')
    .execute()
  const acks = await deps.db
    .selectFrom('handover_ack')
    .innerJoin('app_user', 'app_user.id', 'handover_ack.user_id')
    .select(['handover_ack.id', 'handover_ack.at', 'handover_ack.content_hash', 'app_user.display_name'])
    .where('area_id', '=', areaId)
    .orderBy('at', 'desc')
    .limit(10)
    .execute()
  const state = {
    area: { id: area.id, name: area.name, siteId: area.site_id, siteName: area.site_name, timeZone: area.time_zone },
    at: now.toISOString(),
    bypasses,
    degraded: degraded.map((d) => ({
      limitId: d.limitId,
      tag: d.tag,
      since: d.opened_at.toISOString(),
      reasons: d.reasons,
      compensatingMeasures: d.compensating_measures,
      repairDeadline: d.repair_deadline,
      measuresSignedBy: d.display_name,
    })),
    overdueTests: overdueTests.map((t) => ({
      limitId: t.id,
      tag: t.tag,
      testStatus: t.test_status,
      dueDate: t.test_due_date,
      sil: t.sil,
    })),
    temporaryChanges: temporary.map((c) => ({
      id: c.id,
      title: c.title,
      status: c.status,
      expiresAt: c.expires_at?.toISOString() ?? null,
    })),
  }
  return {
    ...state,
    contentHash: contentHash(state),
    acknowledgements: acks.map((a) => ({
      id: a.id,
      at: a.at.toISOString(),
      by: a.display_name,
      contentHash: a.content_hash,
    })),
  }
}

/** The incoming shift supervisor signs that they have taken over the area in this state of protection. */
export async function acknowledgeHandover(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  areaId: number,
  password: string,
) {
  const state = await protectionState(deps, ability, areaId)
  const isSupervisor = await deps.db
    .selectFrom('role_assignment')
    .select('role')
    .where('user_id', '=', ctx.actorId!)
    .where('site_id', '=', state.area.siteId)
    .where('role', '=', 'shift_supervisor')
    .executeTakeFirst()
  if (!isSupervisor) throw forbidden('The incoming shift supervisor of this site acknowledges the handover')
  const signer = await verifySignaturePassword(deps, ctx.actorId!, password, ctx, {
    entityType: 'Area',
    entityId: areaId,
  })
  const { acknowledgements: _a, contentHash: hash, ...snapshot } = state
  await deps.db.transaction().execute(async (trx) => {
    const { id } = await trx
      .insertInto('handover_ack')
      .values({
        area_id: areaId,
        user_id: signer.id,
        at: deps.clock.now(),
        snapshot: JSON.stringify(snapshot),
        content_hash: hash,
      })
      .returning('id')
      .executeTakeFirstOrThrow()
    await insertSignature(trx, deps.clock, {
      entityType: 'HandoverAck',
      entityId: id,
      userId: signer.id,
      name: signer.name,
      meaning: 'acknowledged',
      contentHash: hash,
    })
    await appendAudit(trx, deps.clock, ctx, {
      action: 'handover.acknowledge',
      entityType: 'Area',
      entityId: areaId,
      after: {
        contentHash: hash,
        bypasses: snapshot.bypasses.length,
        degraded: snapshot.degraded.length,
        overdueTests: snapshot.overdueTests.length,
      },
    })
  })
  return protectionState(deps, ability, areaId)
}

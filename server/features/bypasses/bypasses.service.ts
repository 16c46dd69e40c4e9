import type { Transaction } from 'kysely'
import type { AppAbility } from '../../../shared/abilities/index.ts'
import type { BypassDto, CreateBypassInput } from '../../../shared/schemas/bypasses.ts'
import { ErrorCode } from '../../../shared/errors.ts'
import type { SitePolicy } from '../../../shared/schemas/sites.ts'
import { authorize } from '../../authorize.ts'
import type { AppDeps } from '../../deps.ts'
import type { Database } from '../../db/schema.ts'
import { AppError, conflict, forbidden, invalidState, notFound, unprocessable, validationFailed } from '../../errors.ts'
import { type AuditContext, appendAudit } from '../audit/audit.repository.ts'
import { enqueueMail, mailBodies } from '../mail/mail.outbox.ts'
import { refreshProtectionState } from '../register/protection.ts'
import { verifySignaturePassword } from '../session/session.service.ts'
import { policyOf } from '../sites/sites.service.ts'
import { contentHash, insertSignature, listSignatures } from '../signatures/signatures.ts'
import { findUsersWithRole } from '../users/users.repository.ts'

type Trx = Transaction<Database>
type Db = AppDeps['db'] | Trx
const ENTITY = 'Bypass'
const HOUR = 3_600_000

const hoursBetween = (a: Date, b: Date) => (b.getTime() - a.getTime()) / HOUR

async function loadLimit(db: Db, limitId: number) {
  const l = await db
    .selectFrom('limit_function')
    .innerJoin('site', 'site.id', 'limit_function.site_id')
    .select([
      'limit_function.id',
      'limit_function.tag',
      'limit_function.site_id',
      'limit_function.status',
      'limit_function.limit_class',
      'limit_function.sil',
      'limit_function.bypass_permitted',
      'limit_function.max_bypass_hours',
      'limit_function.compensating_measures',
      'site.policy',
    ])
    .where('limit_function.id', '=', limitId)
    .executeTakeFirst()
  if (!l) throw validationFailed({ limitId: ['The limit does not exist'] })
  return { ...l, policyParsed: policyOf(l) }
}

function measuresRequired(policy: SitePolicy, l: { limit_class: string; sil: number | null }) {
  if (policy.compensatingMeasuresRequiredFor === 'all') return true
  if (policy.compensatingMeasuresRequiredFor === 'sil_only') return l.sil !== null
  return l.limit_class === 'trip' || l.sil !== null
}

/**
 * The longest bypass the user may authorize at the site: the largest of their authorizing roles' limits (DOMAIN.md §6).
 * Beyond the plant manager's limit the linked, approved temporary change request carries the duration: the plant
 * manager signs under it (the limit's own maximum still holds).
 */
async function authorizerMaxHours(
  db: Db,
  userId: number,
  siteId: number,
  policy: SitePolicy,
  linkedChange: boolean,
): Promise<number> {
  const roles = (
    await db
      .selectFrom('role_assignment')
      .select('role')
      .where('user_id', '=', userId)
      .where('site_id', '=', siteId)
      .execute()
  ).map((r) => r.role)
  let max = 0
  if (roles.includes('shift_supervisor') || roles.includes('approver'))
    max = Math.max(max, policy.bypassMaxHoursSupervisor)
  if (roles.includes('plant_manager')) max = Math.max(max, linkedChange ? Infinity : policy.bypassMaxHoursManager)
  return max
}

function selectBypasses(db: Db) {
  return db
    .selectFrom('bypass')
    .innerJoin('limit_function', 'limit_function.id', 'bypass.limit_id')
    .innerJoin('site', 'site.id', 'bypass.site_id')
    .innerJoin('area', 'area.id', 'limit_function.area_id')
    .innerJoin('process', 'process.id', 'limit_function.process_id')
    .innerJoin('app_user as rq', 'rq.id', 'bypass.requested_by')
    .leftJoin('app_user as act', 'act.id', 'bypass.activated_by')
    .leftJoin('app_user as rm', 'rm.id', 'bypass.removed_by')
    .leftJoin('instrument as ch', 'ch.id', 'bypass.channel_instrument_id')
    .selectAll('bypass')
    .select([
      'limit_function.tag',
      'limit_function.limit_class',
      'limit_function.sil',
      'limit_function.area_id',
      'site.code',
      'site.policy',
      'area.name as area_name',
      'process.name as process_name',
      'rq.display_name as requester',
      'act.display_name as activator',
      'rm.display_name as remover',
      'ch.tag as channel_tag',
    ])
}

/** Bypasses by id as API answers (no ability check: callers scope or check). */
export async function loadBypasses(deps: AppDeps, ids: number[], db: Db = deps.db): Promise<BypassDto[]> {
  if (!ids.length) return []
  const rows = await selectBypasses(db).where('bypass.id', 'in', ids).execute()
  const sigs = (await listSignatures(db, ENTITY, ids)).filter((s) => !s.voided_at)
  const byId = new Map(
    rows.map((r) => [
      r.id,
      toDto(
        deps,
        r,
        sigs.filter((s) => s.entity_id === r.id),
      ),
    ]),
  )
  return ids.map((id) => byId.get(id)).filter((d): d is BypassDto => Boolean(d))
}

export async function getBypass(deps: AppDeps, ability: AppAbility, id: number, db: Db = deps.db): Promise<BypassDto> {
  const [dto] = await loadBypasses(deps, [id], db)
  if (!dto) throw notFound('Bypass')
  authorize(ability, 'read', 'Bypass', { siteId: dto.siteId })
  return dto
}

function toDto(
  deps: AppDeps,
  r: any,
  sigs: {
    id: number
    user_id: number
    name: string
    meaning: string
    at: Date
    comment: string
    content_hash: string
  }[],
): BypassDto {
  const now = deps.clock.now()
  const overdue = r.status === 'active' && now > r.planned_end
  const until = r.removed_at ?? (r.status === 'active' ? now : null)
  const policy = policyOf(r)
  return {
    id: r.id,
    limitId: r.limit_id,
    limitTag: r.tag,
    limitClass: r.limit_class,
    sil: r.sil,
    siteId: r.site_id,
    siteCode: r.code,
    areaId: r.area_id,
    areaName: r.area_name,
    processName: r.process_name,
    channelInstrumentId: r.channel_instrument_id,
    channelTag: r.channel_tag,
    requestedById: r.requested_by,
    requestedBy: r.requester,
    reason: r.reason,
    compensatingMeasures: r.compensating_measures,
    plannedStart: r.planned_start.toISOString(),
    plannedEnd: r.planned_end.toISOString(),
    plannedHours: hoursBetween(r.planned_start, r.planned_end),
    status: r.status,
    overdue,
    overdueHours: Math.max(
      0,
      hoursBetween(r.planned_end, r.removed_at ?? (r.status === 'active' ? now : r.planned_end)),
    ),
    changeRequestId: r.change_request_id,
    authorizedAt: r.authorized_at?.toISOString() ?? null,
    activatedAt: r.activated_at?.toISOString() ?? null,
    activatedBy: r.activator,
    removedAt: r.removed_at?.toISOString() ?? null,
    removedBy: r.remover,
    pvClearConfirmed: r.pv_clear_confirmed,
    removalNote: r.removal_note,
    lapsesAt:
      r.status === 'authorized' && r.authorized_at
        ? new Date(r.authorized_at.getTime() + policy.bypassAuthorizationLapseHours * HOUR).toISOString()
        : null,
    bypassedHours: r.activated_at && until ? hoursBetween(r.activated_at, until) : 0,
    authorizations: sigs.map((s) => ({
      id: s.id,
      userId: s.user_id,
      name: s.name,
      meaning: s.meaning,
      at: s.at.toISOString(),
      comment: s.comment,
      contentHash: s.content_hash,
    })),
    createdAt: r.created_at.toISOString(),
  }
}

/** Requests a bypass: checks the limit may be bypassed for that long, with its compensating measures confirmed. */
export async function requestBypass(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  input: CreateBypassInput,
): Promise<BypassDto> {
  const l = await loadLimit(deps.db, input.limitId)
  authorize(ability, 'request', 'Bypass', { siteId: l.site_id })
  if (l.status !== 'active')
    throw invalidState(`Limit ${l.tag} is ${l.status}: only a limit in service can be bypassed`)
  if (!l.bypass_permitted)
    throw unprocessable(`Limit ${l.tag} must not be bypassed (bypass not permitted in the register)`)
  const start = new Date(input.plannedStart)
  const end = new Date(input.plannedEnd)
  const hours = hoursBetween(start, end)
  const policy = l.policyParsed
  if (l.max_bypass_hours !== null && hours > Number(l.max_bypass_hours) + 1e-9) {
    throw validationFailed(
      { plannedEnd: [`At most ${Number(l.max_bypass_hours)} h for ${l.tag}; ${hours.toFixed(1)} h requested`] },
      `The bypass is longer than ${l.tag} allows`,
    )
  }
  if (end.getTime() <= deps.clock.now().getTime())
    throw validationFailed({ plannedEnd: ['The planned end has passed already'] })
  const predefined: string[] = l.compensating_measures
  if (predefined.length && !input.predefinedMeasuresConfirmed)
    throw validationFailed({
      predefinedMeasuresConfirmed: ['Confirm the predefined compensating measures are in place'],
    })
  const measures = [...predefined, ...input.extraMeasures]
  if (measuresRequired(policy, l) && !measures.length)
    throw validationFailed({ extraMeasures: ['This limit needs compensating measures while bypassed (site policy)'] })
  if (input.channelInstrumentId) {
    const channels = (
      await deps.db.selectFrom('limit_instrument').select('instrument_id').where('limit_id', '=', l.id).execute()
    ).map((c) => c.instrument_id)
    if (channels.length < 2 || !channels.includes(input.channelInstrumentId))
      throw validationFailed({
        channelInstrumentId: ['Only one channel of a voted function can be bypassed on its own'],
      })
  }
  if (hours > policy.bypassMaxHoursManager && !input.changeRequestId) {
    throw validationFailed(
      { changeRequestId: [`Beyond ${policy.bypassMaxHoursManager} h a temporary change request is required`] },
      'This bypass needs a temporary change request',
    )
  }
  if (input.changeRequestId) {
    const cr = await deps.db
      .selectFrom('change_request')
      .select(['type', 'status', 'site_id', 'expires_at'])
      .where('id', '=', input.changeRequestId)
      .executeTakeFirst()
    if (
      !cr ||
      cr.site_id !== l.site_id ||
      cr.type !== 'temporary' ||
      !['approved', 'implemented', 'closed'].includes(cr.status)
    ) {
      throw validationFailed({ changeRequestId: ['Link an approved temporary change request of this site'] })
    }
    if (cr.expires_at && cr.expires_at.getTime() < end.getTime()) {
      throw validationFailed({
        plannedEnd: [`The linked temporary change expires at ${cr.expires_at.toISOString()}, before the planned end`],
      })
    }
  }
  const id = await deps.db.transaction().execute(async (trx) => {
    const now = deps.clock.now()
    const { id } = await trx
      .insertInto('bypass')
      .values({
        limit_id: l.id,
        site_id: l.site_id,
        channel_instrument_id: input.channelInstrumentId,
        requested_by: ctx.actorId!,
        reason: input.reason,
        compensating_measures: JSON.stringify(measures),
        planned_start: start,
        planned_end: end,
        change_request_id: input.changeRequestId,
        created_at: now,
        updated_at: now,
      })
      .returning('id')
      .executeTakeFirstOrThrow()
    await appendAudit(trx, deps.clock, ctx, {
      action: 'bypass.request',
      entityType: ENTITY,
      entityId: id,
      after: { ...input, compensatingMeasures: measures },
    })
    const to = (await findUsersWithRole(trx, l.site_id, ['shift_supervisor'])).filter((u) => u.id !== ctx.actorId)
    const bodies = mailBodies(
      [`A bypass of ${l.tag} is requested for ${hours.toFixed(1)} h from ${start.toISOString()}: ${input.reason}`],
      link(deps, id),
    )
    await enqueueMail(
      trx,
      deps.clock,
      to.map((u) => ({ to: u.email, subject: `Bypass of ${l.tag} requested`, ...bodies, topic: 'bypass' })),
    )
    return id
  })
  return getBypass(deps, ability, id)
}

function link(deps: AppDeps, id: number) {
  return { url: `${deps.config.appUrl}/bypasses/${id}`, label: `Open bypass #${id}` }
}

async function lock(trx: Trx, id: number) {
  const b = await trx.selectFrom('bypass').selectAll().where('id', '=', id).forUpdate().executeTakeFirst()
  if (!b) throw notFound('Bypass')
  return b
}

/**
 * Authorizes a requested bypass, or extends an authorized or active one by `hours` (a further signed authorization).
 * Never by the requester; within the longest duration the signer's role may authorize at the site.
 */
export async function authorizeBypass(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  input: { password: string; hours?: number; comment: string },
): Promise<BypassDto> {
  const pre = await deps.db.selectFrom('bypass').selectAll().where('id', '=', id).executeTakeFirst()
  if (!pre) throw notFound('Bypass')
  authorize(ability, 'authorize', 'Bypass', { siteId: pre.site_id })
  if (pre.requested_by === ctx.actorId) throw forbidden('Nobody authorizes their own bypass request')
  const l = await loadLimit(deps.db, pre.limit_id)
  const maxHours = await authorizerMaxHours(
    deps.db,
    ctx.actorId!,
    pre.site_id,
    l.policyParsed,
    pre.change_request_id !== null,
  )
  const signer = await verifySignaturePassword(deps, ctx.actorId!, input.password, ctx, {
    entityType: ENTITY,
    entityId: id,
  })
  await deps.db.transaction().execute(async (trx) => {
    const b = await lock(trx, id)
    const now = deps.clock.now()
    const extension = b.status === 'authorized' || b.status === 'active'
    if (!extension && b.status !== 'requested')
      throw invalidState(`This bypass is ${b.status}; it cannot be authorized`)
    if (extension && !input.hours) throw validationFailed({ hours: ['Say by how many hours to extend'] })
    const newEnd = extension ? new Date(b.planned_end.getTime() + input.hours! * HOUR) : b.planned_end
    const span = extension ? input.hours! : hoursBetween(b.planned_start, b.planned_end)
    if (span > maxHours + 1e-9) {
      throw new AppError(
        403,
        ErrorCode.FORBIDDEN,
        `You may authorize at most ${maxHours} h at this site; ${span.toFixed(1)} h asked${maxHours < l.policyParsed.bypassMaxHoursManager ? ' (a plant manager may authorize longer)' : ''}`,
      )
    }
    const total = hoursBetween(b.planned_start, newEnd)
    if (l.max_bypass_hours !== null && total > Number(l.max_bypass_hours) + 1e-9)
      throw validationFailed({ hours: [`${l.tag} may be bypassed at most ${Number(l.max_bypass_hours)} h in all`] })
    if (total > l.policyParsed.bypassMaxHoursManager && !b.change_request_id)
      throw validationFailed({
        hours: [`Beyond ${l.policyParsed.bypassMaxHoursManager} h in all a temporary change request is required`],
      })
    const content = {
      bypassId: id,
      limitId: b.limit_id,
      plannedStart: b.planned_start.toISOString(),
      plannedEnd: newEnd.toISOString(),
      compensatingMeasures: b.compensating_measures,
      channelInstrumentId: b.channel_instrument_id,
    }
    await insertSignature(trx, deps.clock, {
      entityType: ENTITY,
      entityId: id,
      userId: signer.id,
      name: signer.name,
      meaning: 'authorized',
      contentHash: contentHash(content),
      comment: input.comment,
    })
    await trx
      .updateTable('bypass')
      .set({
        ...(extension
          ? { planned_end: newEnd, expiry_warned_at: null, overdue_notified_at: null, last_escalation_at: null }
          : { status: 'authorized', authorized_at: now }),
        updated_at: now,
      })
      .where('id', '=', id)
      .execute()
    await appendAudit(trx, deps.clock, ctx, {
      action: extension ? 'bypass.extend' : 'bypass.authorize',
      entityType: ENTITY,
      entityId: id,
      after: { ...content, signer: signer.name, hours: input.hours ?? span },
    })
    const requester = await trx
      .selectFrom('app_user')
      .select('email')
      .where('id', '=', b.requested_by)
      .executeTakeFirstOrThrow()
    await enqueueMail(trx, deps.clock, {
      to: requester.email,
      subject: `Bypass #${id} of ${l.tag} ${extension ? 'extended' : 'authorized'}`,
      topic: 'bypass',
      ...mailBodies(
        [
          `${signer.name} ${extension ? `extended the bypass to ${newEnd.toISOString()}` : 'authorized the bypass'}.`,
          extension
            ? ''
            : `Activate it within ${l.policyParsed.bypassAuthorizationLapseHours} h or the authorization lapses.`,
        ].filter(Boolean),
        link(deps, id),
      ),
    })
  })
  return getBypass(deps, ability, id)
}

export async function rejectBypass(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  password: string,
  comment: string,
) {
  const pre = await deps.db.selectFrom('bypass').selectAll().where('id', '=', id).executeTakeFirst()
  if (!pre) throw notFound('Bypass')
  authorize(ability, 'authorize', 'Bypass', { siteId: pre.site_id })
  if (pre.requested_by === ctx.actorId) throw forbidden('Nobody decides on their own bypass request')
  const signer = await verifySignaturePassword(deps, ctx.actorId!, password, ctx, { entityType: ENTITY, entityId: id })
  await deps.db.transaction().execute(async (trx) => {
    const b = await lock(trx, id)
    if (b.status !== 'requested') throw invalidState(`This bypass is ${b.status}; it cannot be rejected`)
    await insertSignature(trx, deps.clock, {
      entityType: ENTITY,
      entityId: id,
      userId: signer.id,
      name: signer.name,
      meaning: 'rejected',
      contentHash: contentHash({ bypassId: id, status: b.status }),
      comment,
    })
    await trx
      .updateTable('bypass')
      .set({ status: 'rejected', updated_at: deps.clock.now() })
      .where('id', '=', id)
      .execute()
    await appendAudit(trx, deps.clock, ctx, {
      action: 'bypass.reject',
      entityType: ENTITY,
      entityId: id,
      after: { signer: signer.name, comment },
    })
  })
  return getBypass(deps, ability, id)
}

/** Puts an authorized bypass in force (one active bypass per limit, enforced by a partial unique index). */
export async function activateBypass(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
): Promise<BypassDto> {
  const pre = await deps.db.selectFrom('bypass').selectAll().where('id', '=', id).executeTakeFirst()
  if (!pre) throw notFound('Bypass')
  authorize(ability, 'activate', 'Bypass', { siteId: pre.site_id })
  try {
    await deps.db.transaction().execute(async (trx) => {
      const b = await lock(trx, id)
      const l = await loadLimit(trx, b.limit_id)
      const now = deps.clock.now()
      if (b.status !== 'authorized')
        throw invalidState(`This bypass is ${b.status}; only an authorized bypass is activated`)
      if (
        b.authorized_at &&
        now.getTime() > b.authorized_at.getTime() + l.policyParsed.bypassAuthorizationLapseHours * HOUR
      ) {
        throw invalidState(
          `The authorization lapsed (not activated within ${l.policyParsed.bypassAuthorizationLapseHours} h); request the bypass again`,
        )
      }
      if (now.getTime() >= b.planned_end.getTime())
        throw invalidState('The planned end has passed; request the bypass again')
      await trx
        .updateTable('bypass')
        .set({ status: 'active', activated_at: now, activated_by: ctx.actorId, updated_at: now })
        .where('id', '=', id)
        .execute()
      await refreshProtectionState(trx, b.limit_id)
      await appendAudit(trx, deps.clock, ctx, {
        action: 'bypass.activate',
        entityType: ENTITY,
        entityId: id,
        after: { limitId: b.limit_id, activatedAt: now.toISOString(), plannedEnd: b.planned_end.toISOString() },
      })
    })
  } catch (err) {
    if ((err as { code?: string }).code === '23505')
      throw conflict('Another bypass of this limit is active already: one active bypass per limit')
    throw err
  }
  return getBypass(deps, ability, id)
}

/** Ends an active bypass on record; the process value must be clear of the limit and the protection back in service. */
export async function removeBypass(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  input: { note: string },
): Promise<BypassDto> {
  const pre = await deps.db.selectFrom('bypass').selectAll().where('id', '=', id).executeTakeFirst()
  if (!pre) throw notFound('Bypass')
  authorize(ability, 'remove', 'Bypass', { siteId: pre.site_id })
  await deps.db.transaction().execute(async (trx) => {
    const b = await lock(trx, id)
    if (b.status !== 'active') throw invalidState(`This bypass is ${b.status}; only an active bypass is removed`)
    const now = deps.clock.now()
    await trx
      .updateTable('bypass')
      .set({
        status: 'removed',
        removed_at: now,
        removed_by: ctx.actorId,
        pv_clear_confirmed: true,
        protection_restored_confirmed: true,
        removal_note: input.note,
        updated_at: now,
      })
      .where('id', '=', id)
      .execute()
    await refreshProtectionState(trx, b.limit_id)
    await appendAudit(trx, deps.clock, ctx, {
      action: 'bypass.remove',
      entityType: ENTITY,
      entityId: id,
      after: {
        removedAt: now.toISOString(),
        pvClearConfirmed: true,
        protectionRestoredConfirmed: true,
        note: input.note,
        overdueHours: Math.max(0, hoursBetween(b.planned_end, now)),
      },
    })
  })
  return getBypass(deps, ability, id)
}

export async function cancelBypass(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
): Promise<BypassDto> {
  const pre = await deps.db.selectFrom('bypass').selectAll().where('id', '=', id).executeTakeFirst()
  if (!pre) throw notFound('Bypass')
  if (pre.requested_by !== ctx.actorId) authorize(ability, 'authorize', 'Bypass', { siteId: pre.site_id })
  await deps.db.transaction().execute(async (trx) => {
    const b = await lock(trx, id)
    if (!['requested', 'authorized'].includes(b.status))
      throw invalidState(`This bypass is ${b.status}; it cannot be cancelled`)
    await trx
      .updateTable('bypass')
      .set({ status: 'cancelled', updated_at: deps.clock.now() })
      .where('id', '=', id)
      .execute()
    await appendAudit(trx, deps.clock, ctx, {
      action: 'bypass.cancel',
      entityType: ENTITY,
      entityId: id,
      before: { status: b.status },
      after: { status: 'cancelled' },
    })
  })
  return getBypass(deps, ability, id)
}

export interface BypassListQuery {
  siteIds: number[]
  areaIds?: number[]
  processIds?: number[]
  limitIds?: number[]
  requesterIds?: number[]
  authorizerIds?: number[]
  status?: string[]
  overdue?: boolean
  from?: Date
  to?: Date
  page: number
  pageSize: number
}

/** Bypass history with filters; `overdue` means active past its planned end (derived, DOMAIN.md §4). */
export async function listBypasses(deps: AppDeps, q: BypassListQuery) {
  const now = deps.clock.now()
  let base = deps.db
    .selectFrom('bypass')
    .innerJoin('limit_function', 'limit_function.id', 'bypass.limit_id')
    .where('bypass.site_id', 'in', q.siteIds.length ? q.siteIds : [-1])
  if (q.areaIds?.length) base = base.where('limit_function.area_id', 'in', q.areaIds)
  if (q.processIds?.length) base = base.where('limit_function.process_id', 'in', q.processIds)
  if (q.limitIds?.length) base = base.where('bypass.limit_id', 'in', q.limitIds)
  if (q.requesterIds?.length) base = base.where('bypass.requested_by', 'in', q.requesterIds)
  if (q.authorizerIds?.length) {
    base = base.where((eb) =>
      eb.exists(
        eb
          .selectFrom('signature')
          .select('signature.id')
          .where('signature.entity_type', '=', ENTITY)
          .whereRef('signature.entity_id', '=', 'bypass.id')
          .where('signature.meaning', '=', 'authorized')
          .where('signature.user_id', 'in', q.authorizerIds!),
      ),
    )
  }
  if (q.status?.length) base = base.where('bypass.status', 'in', q.status)
  if (q.overdue !== undefined) {
    base = q.overdue
      ? base.where('bypass.status', '=', 'active').where('bypass.planned_end', '<', now)
      : base.where((eb) => eb.or([eb('bypass.status', '!=', 'active'), eb('bypass.planned_end', '>=', now)]))
  }
  if (q.from)
    base = base.where((eb) => eb.or([eb('bypass.removed_at', '>=', q.from!), eb('bypass.removed_at', 'is', null)]))
  if (q.to) base = base.where('bypass.planned_start', '<', q.to)
  const total = (await base.select((eb) => eb.fn.countAll<number>().as('n')).executeTakeFirstOrThrow()).n
  const ids = (
    await base
      .select('bypass.id')
      .orderBy('bypass.created_at', 'desc')
      .orderBy('bypass.id', 'desc')
      .limit(q.pageSize)
      .offset((q.page - 1) * q.pageSize)
      .execute()
  ).map((r) => r.id)
  return { total, items: await loadBypasses(deps, ids) }
}

export { ENTITY as BYPASS_ENTITY }

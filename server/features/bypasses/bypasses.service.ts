import type { AppAbility } from '../../../shared/abilities/index.ts'
import {
  activateVerdict,
  authorizeVerdict,
  type BypassActor,
  type BypassContext,
  type BypassFacts,
  cancelVerdict,
  extendVerdict,
  lapsesAt,
  rejectVerdict,
  removeVerdict,
  requestVerdict,
} from '../../../shared/domain/rules/bypasses.ts'
import type { Verdict } from '../../../shared/domain/rules/verdict.ts'
import type { ActivateBypassInput, BypassDto, CreateBypassInput } from '../../../shared/schemas/bypasses.ts'
import type { SitePolicy } from '../../../shared/schemas/sites.ts'
import { allows, readableRow } from '../../authorize.ts'
import type { AppDeps } from '../../deps.ts'
import { errorField } from '../../db/index.ts'
import { conflict, enforce, notFound, validationFailed } from '../../errors.ts'
import { type AuditContext, appendAudit } from '../audit/audit.repository.ts'
import { mailNotice, recordLink } from '../mail/mail.outbox.ts'
import { refreshProtectionState } from '../register/protection-state-column.ts'
import { verifySignaturePassword } from '../session/session.service.ts'
import { policyOf } from '../sites/sites.service.ts'
import { contentHash, listSignatures, signAs, signatureDto } from '../signatures/signatures.ts'
import { findRolesByUserIds, recipientsOf, userContact } from '../users/users.repository.ts'
import * as repo from './bypasses.repository.ts'
import type { BypassListQuery, BypassRow } from './bypasses.repository.ts'

type Db = AppDeps['db']
const ENTITY = repo.BYPASS_ENTITY
const HOUR = 3_600_000

const hoursBetween = (a: Date, b: Date) => (b.getTime() - a.getTime()) / HOUR

function measuresRequired(policy: SitePolicy, l: { limit_class: string; sil: number | null }) {
  if (policy.compensatingMeasuresRequiredFor === 'all') return true
  if (policy.compensatingMeasuresRequiredFor === 'sil_only') return l.sil !== null
  return l.limit_class === 'trip' || l.sil !== null
}

/** The actor of a rule-book question: the user, their ability and their roles at the bypass's site. */
async function actorAt(db: Db, ability: AppAbility, ctx: AuditContext, siteId: number): Promise<BypassActor> {
  const id = ctx.actorId ?? -1
  const roles = (await findRolesByUserIds(db, [id])).get(id) ?? []
  return { id, ability, rolesAtSite: roles.filter((r) => r.siteId === siteId).map((r) => r.role) }
}

/** A refusal of the rule book; a 422 about the duration is answered as a field error of `field`. */
function enforceOn(verdict: Verdict, field: string) {
  if (!verdict.allowed && verdict.status === 422) throw validationFailed({ [field]: [verdict.reason] }, verdict.reason)
  enforce(verdict)
}

/** What the rule book needs of a locked row and its limit. */
function factsOf(
  b: {
    site_id: number
    status: BypassFacts['status']
    requested_by: number
    planned_start: Date
    planned_end: Date
    authorized_at: Date | null
    activated_at: Date | null
    change_request_id: number | null
  },
  l: { tag: string; max_bypass_hours: string | null },
): BypassFacts {
  return {
    siteId: b.site_id,
    status: b.status,
    requestedById: b.requested_by,
    plannedStart: b.planned_start,
    plannedEnd: b.planned_end,
    authorizedAt: b.authorized_at,
    activatedAt: b.activated_at,
    changeRequestId: b.change_request_id,
    limitTag: l.tag,
    limitMaxBypassHours: l.max_bypass_hours === null ? null : Number(l.max_bypass_hours),
  }
}

async function limitOf(db: Db | Parameters<typeof repo.lockBypass>[0], limitId: number) {
  const l = await repo.findLimitForBypass(db, limitId)
  if (!l) throw validationFailed({ limitId: ['The limit does not exist'] })
  return { ...l, policyParsed: policyOf(l) }
}

/** Bypasses by id as API answers (no ability check: callers scope or check). */
export async function loadBypasses(
  deps: AppDeps,
  ids: number[],
  db: Parameters<typeof repo.selectBypassRows>[0] = deps.db,
): Promise<BypassDto[]> {
  if (!ids.length) return []
  const rows = await repo.selectBypassRows(db, ids)
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

export async function getBypass(deps: AppDeps, ability: AppAbility, id: number): Promise<BypassDto> {
  const [dto] = await loadBypasses(deps, [id])
  return readableRow(dto, ability, 'Bypass')
}

function toDto(
  deps: AppDeps,
  r: BypassRow,
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
  const facts = factsOf(r, r)
  const lapse = lapsesAt(facts, policyOf(r))
  return {
    id: r.id,
    limitId: r.limit_id,
    limitTag: r.tag,
    limitClass: r.limit_class,
    sil: r.sil,
    limitMaxBypassHours: facts.limitMaxBypassHours,
    siteId: r.site_id,
    siteCode: r.code,
    timeZone: r.time_zone,
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
    lapsesAt: lapse?.toISOString() ?? null,
    bypassedHours: r.activated_at && until ? hoursBetween(r.activated_at, until) : 0,
    authorizations: sigs.map((s) => ({ ...signatureDto(s), comment: s.comment })),
    createdAt: r.created_at.toISOString(),
    source: r.source,
    asOf: now.toISOString(),
  }
}

/** Requests a bypass: checks the limit may be bypassed for that long, with its compensating measures confirmed. */
export async function requestBypass(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  input: CreateBypassInput,
): Promise<BypassDto> {
  const l = await limitOf(deps.db, input.limitId)
  // another site's limit answers as a missing one (docs/security.md#authorization)
  if (!allows(ability, 'read', 'Limit', { siteId: l.site_id }))
    throw validationFailed({ limitId: ['The limit does not exist'] })
  enforce(
    requestVerdict(
      { siteId: l.site_id, tag: l.tag, status: l.status, bypassPermitted: l.bypass_permitted },
      { ability },
    ),
  )
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
    const channels = await repo.findLimitChannelIds(deps.db, l.id)
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
    const cr = await repo.findLinkableChange(deps.db, input.changeRequestId)
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
    const { id } = await repo.insertBypass(trx, {
      limitId: l.id,
      siteId: l.site_id,
      channelInstrumentId: input.channelInstrumentId,
      requestedBy: ctx.actorId!,
      reason: input.reason,
      measures,
      plannedStart: start,
      plannedEnd: end,
      changeRequestId: input.changeRequestId,
      now,
    })
    await appendAudit(trx, deps.clock, ctx, {
      action: 'bypass.request',
      entityType: ENTITY,
      entityId: id,
      after: { ...input, compensatingMeasures: measures },
    })
    const to = (await recipientsOf(trx, l.site_id, 'bypassRequested')).filter((u) => u.id !== ctx.actorId)
    await mailNotice(trx, deps.clock, to, {
      subject: `Bypass of ${l.tag} requested`,
      topic: 'bypass',
      paragraphs: [
        `A bypass of ${l.tag} is requested for ${hours.toFixed(1)} h from ${start.toISOString()}: ${input.reason}`,
      ],
      link: link(deps, id),
    })
    return id
  })
  return getBypass(deps, ability, id)
}

function link(deps: AppDeps, id: number) {
  return recordLink(deps.config.appUrl, 'bypasses', 'bypass', id)
}

/** Loads what a rule-book question about a bypass needs, outside or inside a transaction. */
async function factsFor(db: Parameters<typeof repo.lockBypass>[0], id: number, now: Date) {
  const b = await repo.lockBypass(db, id)
  if (!b) throw notFound('Bypass')
  const l = await limitOf(db, b.limit_id)
  const rule: BypassContext = { policy: l.policyParsed, timeZone: l.time_zone, now }
  return { b, l, facts: factsOf(b, l), rule }
}

/** The site of a bypass, for the actor's roles (404 for a missing bypass and for one the user cannot see). */
async function siteOf(deps: AppDeps, ability: AppAbility, id: number) {
  const b = readableRow(await repo.findBypassSite(deps.db, id), ability, 'Bypass')
  return b.site_id
}

type Facts = Awaited<ReturnType<typeof factsFor>>

/**
 * An action on a bypass without a signature: under the row lock the rule book's `verdict` for the actor, then `work` in
 * the same transaction; answers the bypass as it now stands.
 */
async function actOnBypass(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  verdict: (facts: BypassFacts, actor: BypassActor, rule: BypassContext) => Verdict,
  work: (trx: Parameters<typeof repo.lockBypass>[0], x: Facts) => Promise<void>,
): Promise<BypassDto> {
  const actor = await actorAt(deps.db, ability, ctx, await siteOf(deps, ability, id))
  await deps.db.transaction().execute(async (trx) => {
    const x = await factsFor(trx, id, deps.clock.now())
    enforce(verdict(x.facts, actor, x.rule))
    await work(trx, x)
  })
  return getBypass(deps, ability, id)
}

/**
 * Authorizes a requested bypass, or extends an authorized or active one by `hours` (a further signed authorization).
 * Never by the requester; within the longest duration the signer's role may authorize at the site, counted from when
 * the bypass was put in force (docs/bypasses.md#role-limits).
 */
export async function authorizeBypass(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  input: { password: string; hours?: number; comment: string },
): Promise<BypassDto> {
  const actor = await actorAt(deps.db, ability, ctx, await siteOf(deps, ability, id))
  const judge = (x: Awaited<ReturnType<typeof factsFor>>) => {
    const extension = x.b.status === 'authorized' || x.b.status === 'active'
    if (extension && !input.hours) {
      enforce(extendVerdict(x.facts, actor, x.rule))
      throw validationFailed({ hours: ['Say by how many hours to extend'] })
    }
    enforceOn(
      extension ? extendVerdict(x.facts, actor, x.rule, input.hours) : authorizeVerdict(x.facts, actor, x.rule),
      'hours',
    )
    return extension
  }
  // the rule book first (403/409, nothing written), then the slow password check, then again under the row lock
  await deps.db.transaction().execute(async (trx) => {
    judge(await factsFor(trx, id, deps.clock.now()))
  })
  const signer = await verifySignaturePassword(deps, ctx.actorId!, input.password, ctx, {
    entityType: ENTITY,
    entityId: id,
  })
  await deps.db.transaction().execute(async (trx) => {
    const now = deps.clock.now()
    const x = await factsFor(trx, id, now)
    const { b, l } = x
    const extension = judge(x)
    const newEnd = extension ? new Date(b.planned_end.getTime() + input.hours! * HOUR) : b.planned_end
    const content = {
      bypassId: id,
      limitId: b.limit_id,
      plannedStart: b.planned_start.toISOString(),
      plannedEnd: newEnd.toISOString(),
      compensatingMeasures: b.compensating_measures,
      channelInstrumentId: b.channel_instrument_id,
    }
    await signAs(trx, deps.clock, signer, {
      entityType: ENTITY,
      entityId: id,
      meaning: 'authorized',
      contentHash: contentHash(content),
      comment: input.comment,
    })
    await repo.updateBypass(trx, id, {
      ...(extension
        ? { planned_end: newEnd, expiry_warned_at: null, overdue_notified_at: null, last_escalation_at: null }
        : { status: 'authorized', authorized_at: now }),
      updated_at: now,
    })
    await appendAudit(trx, deps.clock, ctx, {
      action: extension ? 'bypass.extend' : 'bypass.authorize',
      entityType: ENTITY,
      entityId: id,
      after: { ...content, signer: signer.name, hours: input.hours ?? hoursBetween(b.planned_start, b.planned_end) },
    })
    const requester = await userContact(trx, b.requested_by)
    await mailNotice(trx, deps.clock, [requester], {
      subject: `Bypass #${id} of ${l.tag} ${extension ? 'extended' : 'authorized'}`,
      topic: 'bypass',
      paragraphs: [
        `${signer.name} ${extension ? `extended the bypass to ${newEnd.toISOString()}` : 'authorized the bypass'}.`,
        extension
          ? ''
          : `Put it in force from its planned start (${b.planned_start.toISOString()}) and within ` +
            `${l.policyParsed.bypassAuthorizationLapseHours} h of it, or the authorization lapses.`,
      ].filter(Boolean),
      link: link(deps, id),
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
  const actor = await actorAt(deps.db, ability, ctx, await siteOf(deps, ability, id))
  await deps.db
    .transaction()
    .execute(async (trx) => enforce(rejectVerdict((await factsFor(trx, id, deps.clock.now())).facts, actor)))
  const signer = await verifySignaturePassword(deps, ctx.actorId!, password, ctx, { entityType: ENTITY, entityId: id })
  await deps.db.transaction().execute(async (trx) => {
    const { b, facts } = await factsFor(trx, id, deps.clock.now())
    enforce(rejectVerdict(facts, actor))
    await signAs(trx, deps.clock, signer, {
      entityType: ENTITY,
      entityId: id,
      meaning: 'rejected',
      contentHash: contentHash({ bypassId: id, status: b.status }),
      comment,
    })
    await repo.updateBypass(trx, id, { status: 'rejected', updated_at: deps.clock.now() })
    await appendAudit(trx, deps.clock, ctx, {
      action: 'bypass.reject',
      entityType: ENTITY,
      entityId: id,
      after: { signer: signer.name, comment },
    })
  })
  return getBypass(deps, ability, id)
}

/**
 * Puts an authorized bypass in force, from its planned start on (one active bypass per limit, enforced by a partial
 * unique index).
 */
export async function activateBypass(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  confirmed: ActivateBypassInput,
): Promise<BypassDto> {
  try {
    return await actOnBypass(deps, ability, ctx, id, activateVerdict, async (trx, { b, rule: { now } }) => {
      await repo.updateBypass(trx, id, {
        status: 'active',
        activated_at: now,
        activated_by: ctx.actorId,
        updated_at: now,
      })
      await refreshProtectionState(trx, b.limit_id)
      await appendAudit(trx, deps.clock, ctx, {
        action: 'bypass.activate',
        entityType: ENTITY,
        entityId: id,
        after: {
          limitId: b.limit_id,
          activatedAt: now.toISOString(),
          plannedEnd: b.planned_end.toISOString(),
          measuresInPlace: confirmed.measuresInPlace,
          shownToOperator: confirmed.shownToOperator,
        },
      })
    })
  } catch (err) {
    if (errorField(err, 'code') === '23505')
      throw conflict('Another bypass of this limit is active already: one active bypass per limit')
    throw err
  }
}

/** Ends an active bypass on record; the process value must be clear of the limit and the protection back in service. */
export async function removeBypass(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  input: { note: string },
): Promise<BypassDto> {
  return actOnBypass(deps, ability, ctx, id, removeVerdict, async (trx, { b, rule: { now } }) => {
    await repo.updateBypass(trx, id, {
      status: 'removed',
      removed_at: now,
      removed_by: ctx.actorId,
      pv_clear_confirmed: true,
      protection_restored_confirmed: true,
      removal_note: input.note,
      updated_at: now,
    })
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
}

export async function cancelBypass(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
): Promise<BypassDto> {
  return actOnBypass(deps, ability, ctx, id, cancelVerdict, async (trx, { b, rule: { now } }) => {
    await repo.updateBypass(trx, id, { status: 'cancelled', updated_at: now })
    await appendAudit(trx, deps.clock, ctx, {
      action: 'bypass.cancel',
      entityType: ENTITY,
      entityId: id,
      before: { status: b.status },
      after: { status: 'cancelled' },
    })
  })
}

export type { BypassListQuery }

/** Bypass history with filters; `overdue` means active past its planned end (derived, docs/bypasses.md#overdue). */
export async function listBypasses(deps: AppDeps, q: BypassListQuery) {
  const { total, ids } = await repo.findBypassIds(deps.db, q, deps.clock.now())
  return { total, items: await loadBypasses(deps, ids) }
}

export { ENTITY as BYPASS_ENTITY }

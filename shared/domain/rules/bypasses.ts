import { subject } from '@casl/ability'
import type { AppAbility } from '../../abilities/index.ts'
import type { BypassStatus } from '../../schemas/bypasses.ts'
import type { SitePolicy } from '../../schemas/sites.ts'
import type { Role } from '../../schemas/users.ts'
import { allow, blocked, forbid, invalid, type Verdict, type Verdicts } from './verdict.ts'

// The bypass workflow's rules, in one place (docs/bypasses.md#rules). The server calls them as the guard inside the
// locked transaction; the bypass screens build their buttons, disabled states and tooltips from the same answers.

const HOUR = 3_600_000
/** Slack on hour comparisons (floating-point sums of hours). */
const EPS_HOURS = 1e-9

export type BypassAction = 'authorize' | 'reject' | 'extend' | 'activate' | 'remove' | 'cancel'

/** Who asks: their user id, their CASL ability and the roles they hold at the bypass's site. */
export interface BypassActor {
  id: number
  ability: AppAbility
  rolesAtSite: readonly Role[]
}

/** What the rules need to know about a bypass (a BypassDto carries all of it). */
export interface BypassFacts {
  siteId: number
  status: BypassStatus
  requestedById: number
  plannedStart: string | Date
  plannedEnd: string | Date
  authorizedAt: string | Date | null
  activatedAt: string | Date | null
  changeRequestId: number | null
  limitTag: string
  /** The limit's own longest bypass (register field), null when it sets none. */
  limitMaxBypassHours: number | null
}

/** The site and the moment: the site's policy, its time zone (for times in messages) and now. */
export interface BypassContext {
  policy: SitePolicy
  timeZone: string
  now: Date
}

const ms = (d: string | Date) => (typeof d === 'string' ? Date.parse(d) : d.getTime())
const hoursBetween = (a: string | Date, b: string | Date) => (ms(b) - ms(a)) / HOUR
function atSite(b: { siteId: number }): Record<string, unknown> {
  const fields: Record<string, unknown> = { siteId: b.siteId }
  return subject('Bypass', fields)
}

/** `4 h`, `1.5 h`. */
export function hoursLabel(h: number): string {
  if (!Number.isFinite(h)) return 'any duration'
  const r = Math.round(h * 10) / 10
  return `${Number.isInteger(r) ? r : r.toFixed(1)} h`
}

/** An instant written in the site's time zone, with the zone: `7 Sept 2026, 10:00 CEST (Europe/Berlin)`. */
export function timeInZone(at: string | Date, timeZone: string): string {
  const text = new Intl.DateTimeFormat('en-GB', {
    year: 'numeric',
    month: 'short',
    day: 'numeric',
    hour: '2-digit',
    minute: '2-digit',
    timeZone,
    timeZoneName: 'short',
  }).format(new Date(ms(at)))
  return `${text} (${timeZone})`
}

/**
 * The longest bypass, in hours counted from when it is put in force, that someone holding these roles at the site may
 * sign for (docs/bypasses.md#role-limits): a shift supervisor or approver the shift limit, a plant manager the
 * manager's limit, and beyond it any duration when an approved temporary change request is linked (the change
 * carries the duration). 0 when none of the roles authorizes.
 */
export function authorizerMaxHours(rolesAtSite: readonly Role[], policy: SitePolicy, linkedChange: boolean): number {
  let max = 0
  if (rolesAtSite.includes('shift_supervisor') || rolesAtSite.includes('approver'))
    max = Math.max(max, policy.bypassMaxHoursSupervisor)
  if (rolesAtSite.includes('plant_manager'))
    max = Math.max(max, linkedChange ? Number.POSITIVE_INFINITY : policy.bypassMaxHoursManager)
  return max
}

/** Who signs for a total the actor's roles cannot: the next role up. */
function nextSigner(total: number, policy: SitePolicy, linkedChange: boolean): string {
  if (total <= policy.bypassMaxHoursSupervisor + EPS_HOURS) return 'a shift supervisor, approver or plant manager'
  if (total <= policy.bypassMaxHoursManager + EPS_HOURS || linkedChange) return 'a plant manager'
  return 'a plant manager, under a linked temporary change request'
}

/** From when the role limits count: the time the bypass was put in force, or its planned start before that. */
export const bypassBaseline = (b: BypassFacts): Date => new Date(ms(b.activatedAt ?? b.plannedStart))

/** Total hours of the bypass counted from its baseline to an end. */
export const totalHoursTo = (b: BypassFacts, end: string | Date) => hoursBetween(bypassBaseline(b), end)

/** When an authorized bypass lapses: the lapse time after the later of the authorization and the planned start. */
export function lapsesAt(
  b: Pick<BypassFacts, 'status' | 'authorizedAt' | 'plannedStart'>,
  policy: SitePolicy,
): Date | null {
  if (b.status !== 'authorized' || !b.authorizedAt) return null
  return new Date(Math.max(ms(b.authorizedAt), ms(b.plannedStart)) + policy.bypassAuthorizationLapseHours * HOUR)
}

/** Checks a total duration (hours from the baseline) against the limit's maximum, the actor's role and the policy. */
function durationVerdict(b: BypassFacts, actor: BypassActor, ctx: BypassContext, total: number): Verdict {
  const linked = b.changeRequestId !== null
  if (b.limitMaxBypassHours !== null && total > b.limitMaxBypassHours + EPS_HOURS)
    return invalid(`${b.limitTag} may be bypassed at most ${hoursLabel(b.limitMaxBypassHours)} in all`)
  if (total > ctx.policy.bypassMaxHoursManager + EPS_HOURS && !linked)
    return invalid(
      `Beyond ${hoursLabel(ctx.policy.bypassMaxHoursManager)} in all a temporary change request is required`,
    )
  const max = authorizerMaxHours(actor.rolesAtSite, ctx.policy, linked)
  if (total > max + EPS_HOURS)
    return forbid(
      `You may authorize at most ${hoursLabel(max)} at this site, counted from when the bypass is put in force; ` +
        `${hoursLabel(total)} in all needs the signature of ${nextSigner(total, ctx.policy, linked)}`,
    )
  return allow
}

function signerVerdict(b: BypassFacts, actor: BypassActor, what: string): Verdict {
  if (!actor.ability.can('authorize', atSite(b)))
    return forbid('Shift supervisors, approvers and plant managers of the site authorize bypasses')
  if (b.requestedById === actor.id) return forbid(`Nobody ${what} their own bypass request`)
  return allow
}

/** Authorize a requested bypass for its planned duration. */
export function authorizeVerdict(b: BypassFacts, actor: BypassActor, ctx: BypassContext): Verdict {
  const who = signerVerdict(b, actor, 'authorizes')
  if (!who.allowed) return who
  if (b.status !== 'requested') return blocked(`This bypass is ${b.status}; only a requested bypass is authorized`)
  if (ms(b.plannedEnd) <= ctx.now.getTime()) return blocked('The planned end has passed; request the bypass again')
  return durationVerdict(b, actor, ctx, hoursBetween(b.plannedStart, b.plannedEnd))
}

/** Reject a requested bypass (signed, with a reason). */
export function rejectVerdict(b: BypassFacts, actor: BypassActor): Verdict {
  const who = signerVerdict(b, actor, 'decides on')
  if (!who.allowed) return who
  if (b.status !== 'requested') return blocked(`This bypass is ${b.status}; only a requested bypass is rejected`)
  return allow
}

/**
 * Extend an authorized or active bypass by `hours` (a further signed authorization). The role limits apply to the
 * total from when it was put in force (or its planned start) to the new end, so repeated extensions add up; an
 * extension past the signer's limit needs the next role's signature. Without `hours`: may the actor extend at all.
 */
export function extendVerdict(b: BypassFacts, actor: BypassActor, ctx: BypassContext, hours?: number): Verdict {
  const who = signerVerdict(b, actor, 'extends')
  if (!who.allowed) return who
  if (b.status !== 'authorized' && b.status !== 'active')
    return blocked(`This bypass is ${b.status}; only an authorized or active bypass is extended`)
  if (hours === undefined) {
    const room = extensionRoomHours(b, actor, ctx)
    if (room <= EPS_HOURS)
      return forbid(
        `The bypass already runs ${hoursLabel(totalHoursTo(b, b.plannedEnd))} in all, the most you may authorize at ` +
          `this site; a longer bypass needs the signature of ` +
          nextSigner(totalHoursTo(b, b.plannedEnd) + 1, ctx.policy, b.changeRequestId !== null),
      )
    return allow
  }
  if (!(hours > 0)) return invalid('Say by how many hours to extend')
  return durationVerdict(b, actor, ctx, totalHoursTo(b, new Date(ms(b.plannedEnd) + hours * HOUR)))
}

/** How many hours the actor may still add to the planned end (0 when none; Infinity without a bound). */
export function extensionRoomHours(b: BypassFacts, actor: BypassActor, ctx: BypassContext): number {
  const linked = b.changeRequestId !== null
  const bounds = [authorizerMaxHours(actor.rolesAtSite, ctx.policy, linked)]
  if (!linked) bounds.push(ctx.policy.bypassMaxHoursManager)
  if (b.limitMaxBypassHours !== null) bounds.push(b.limitMaxBypassHours)
  return Math.max(0, Math.min(...bounds) - totalHoursTo(b, b.plannedEnd))
}

/**
 * Put an authorized bypass in force: never before its planned start (a bypass needed earlier is requested again),
 * never after its planned end, never once the authorization has lapsed.
 */
export function activateVerdict(b: BypassFacts, actor: BypassActor, ctx: BypassContext): Verdict {
  if (!actor.ability.can('activate', atSite(b)))
    return forbid('Operators, technicians and shift supervisors of the site put bypasses in force')
  if (b.status !== 'authorized') return blocked(`This bypass is ${b.status}; only an authorized bypass is put in force`)
  const now = ctx.now.getTime()
  if (now < ms(b.plannedStart))
    return blocked(
      `The bypass is authorized from ${timeInZone(b.plannedStart, ctx.timeZone)}; it cannot be put in force ` +
        'before its planned start. If it is needed earlier, request a bypass again',
    )
  const lapse = lapsesAt(b, ctx.policy)
  if (lapse && now > lapse.getTime())
    return blocked(
      `The authorization lapsed at ${timeInZone(lapse, ctx.timeZone)} (not put in force within ` +
        `${hoursLabel(ctx.policy.bypassAuthorizationLapseHours)}); request the bypass again`,
    )
  if (now >= ms(b.plannedEnd)) return blocked('The planned end has passed; request the bypass again')
  return allow
}

/** Remove an active bypass on record. */
export function removeVerdict(b: BypassFacts, actor: BypassActor): Verdict {
  if (!actor.ability.can('remove', atSite(b)))
    return forbid('Operators, technicians and shift supervisors of the site remove bypasses')
  if (b.status !== 'active') return blocked(`This bypass is ${b.status}; only an active bypass is removed`)
  return allow
}

/** Cancel a bypass not yet in force: its requester or an authorizer of the site. */
export function cancelVerdict(b: BypassFacts, actor: BypassActor): Verdict {
  if (b.requestedById !== actor.id && !actor.ability.can('authorize', atSite(b)))
    return forbid('The requester or an authorizer of the site cancels a bypass request')
  if (b.status !== 'requested' && b.status !== 'authorized')
    return blocked(`This bypass is ${b.status}; only a requested or authorized bypass is cancelled`)
  return allow
}

/** Every action on one bypass, for the screens (the extension without a number of hours). */
export function bypassActions(b: BypassFacts, actor: BypassActor, ctx: BypassContext): Verdicts<BypassAction> {
  return {
    authorize: authorizeVerdict(b, actor, ctx),
    reject: rejectVerdict(b, actor),
    extend: extendVerdict(b, actor, ctx),
    activate: activateVerdict(b, actor, ctx),
    remove: removeVerdict(b, actor),
    cancel: cancelVerdict(b, actor),
  }
}

/** The states in which each action applies at all. */
export const ACTION_STATES: Record<BypassAction, readonly BypassStatus[]> = {
  authorize: ['requested'],
  reject: ['requested'],
  extend: ['authorized', 'active'],
  activate: ['authorized'],
  remove: ['active'],
  cancel: ['requested', 'authorized'],
}
const ACTION_RIGHT = {
  authorize: 'authorize',
  reject: 'authorize',
  extend: 'authorize',
  activate: 'activate',
  remove: 'remove',
  cancel: 'authorize',
} as const

/**
 * What a screen offers: an action is offered (a button shown) where it applies to the state and the actor holds the
 * right at the site (the requester may always cancel); it is enabled when its verdict allows it, otherwise the
 * verdict's reason is the tooltip (for example "authorized from 17:00", or the hour limit reached).
 */
export function bypassOffers(
  b: BypassFacts,
  actor: BypassActor,
  ctx: BypassContext,
): Record<BypassAction, { offered: boolean; verdict: Verdict }> {
  const verdicts = bypassActions(b, actor, ctx)
  const offer = (a: BypassAction) => ({
    offered:
      ACTION_STATES[a].includes(b.status) &&
      (actor.ability.can(ACTION_RIGHT[a], atSite(b)) || (a === 'cancel' && b.requestedById === actor.id)),
    verdict: verdicts[a],
  })
  return {
    authorize: offer('authorize'),
    reject: offer('reject'),
    extend: offer('extend'),
    activate: offer('activate'),
    remove: offer('remove'),
    cancel: offer('cancel'),
  }
}

/** What the rules need to know about a limit to request its bypass. */
export interface BypassableLimit {
  siteId: number
  tag: string
  status: string
  bypassPermitted: boolean
}

/** Request a bypass of a limit: a requesting role at its site, a limit in service that may be bypassed. */
export function requestVerdict(l: BypassableLimit, actor: Pick<BypassActor, 'ability'>): Verdict {
  if (!actor.ability.can('request', atSite(l)))
    return forbid('Operators, technicians, shift supervisors and safety engineers of the site request bypasses')
  if (l.status !== 'active') return blocked(`Limit ${l.tag} is ${l.status}: only a limit in service can be bypassed`)
  if (!l.bypassPermitted) return invalid(`Limit ${l.tag} must not be bypassed (bypass not permitted in the register)`)
  return allow
}

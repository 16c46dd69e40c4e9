// Rule book of alarm states: shelving (operator, temporary, time-limited), suppression by design (engineered under
// management of change) and out of service (maintenance, under a supervisor's signature, ended by a
// return-to-service record). ISA-18.2 separates the three; OPC UA Part 9 refuses a shelving longer than the
// maximum shelving time. These states are not SIS bypasses, which the bypass workflow controls. docs/alarms.md.
import type { Role } from '../../schemas/users.ts'
import { allow, blocked, forbid, invalid, type Verdict, type Verdicts } from './verdict.ts'

export const ALARM_STATE_KINDS = ['shelved', 'suppressed', 'out_of_service'] as const
export type AlarmStateKind = (typeof ALARM_STATE_KINDS)[number]
export const ALARM_STATE_STATUSES = ['active', 'ended'] as const
export type AlarmStateStatus = (typeof ALARM_STATE_STATUSES)[number]

export type AlarmStatePriority = 'low' | 'medium' | 'high' | 'critical'

/** Site policy for alarm states (defaults: common practice, no standard behind the numbers). */
export interface AlarmStatePolicy {
  /** Longest shelving per priority, hours. */
  shelveMaxHours: Record<AlarmStatePriority, number>
  /** Longest out-of-service period before it must be renewed, hours. */
  outOfServiceMaxHours: number
}
export const DEFAULT_ALARM_STATE_POLICY: AlarmStatePolicy = {
  shelveMaxHours: { low: 12, medium: 8, high: 4, critical: 1 },
  outOfServiceMaxHours: 24 * 14,
}

export interface AlarmStateActor {
  userId: number
  /** Roles at the alarm's site. */
  roles: readonly Role[]
}

/** A request to place an alarm in a state. */
export interface AlarmStateRequest {
  kind: AlarmStateKind
  priority: AlarmStatePriority | null
  /** The alarm's limit is a trip, has a SIL or is marked highly managed. */
  safetyRelated: boolean
  hours: number
  /** The actor gave their signature password with the request. */
  signed: boolean
  /** Suppression by design: the change request it was engineered under. */
  changeRequestId: number | null
}

/** A stored state. */
export interface AlarmStateRecord {
  kind: AlarmStateKind
  status: AlarmStateStatus
  until: Date
  startedBy: number
}

const SHELVERS: Role[] = ['operator', 'shift_supervisor']
const SUPPRESSORS: Role[] = ['safety_engineer']
const OOS_SIGNERS: Role[] = ['shift_supervisor']
const has = (a: Pick<AlarmStateActor, 'roles'>, roles: Role[]) => a.roles.some((r) => roles.includes(r))
/** Who may start each kind of state (the signature and the request's own conditions aside). */
const STARTERS: Record<AlarmStateKind, Role[]> = {
  shelved: SHELVERS,
  suppressed: SUPPRESSORS,
  out_of_service: OOS_SIGNERS,
}

/**
 * The kinds of state the actor's roles at the site may start: what the screen offers. `mayStart` still decides each
 * request (signature, priority, duration, change request).
 */
export function startableKinds(actor: Pick<AlarmStateActor, 'roles'>): AlarmStateKind[] {
  return ALARM_STATE_KINDS.filter((kind) => has(actor, STARTERS[kind]))
}

const KIND_WORD: Record<AlarmStateKind, string> = {
  shelved: 'shelving',
  suppressed: 'suppression by design',
  out_of_service: 'out-of-service period',
}

/** May the actor place an alarm in this state now? (The alarm must not already be in an active state.) */
export function mayStart(
  req: AlarmStateRequest,
  actor: AlarmStateActor,
  policy: AlarmStatePolicy,
  current: AlarmStateRecord | null,
): Verdict {
  if (current && current.status === 'active')
    return blocked(`The alarm already has an active ${KIND_WORD[current.kind]}; end it first`)
  if (!(req.hours > 0)) return invalid('Give a duration of more than zero hours')
  if (req.kind === 'shelved') {
    if (!has(actor, STARTERS.shelved))
      return forbid('Only an operator or a shift supervisor of the site may shelve an alarm')
    if (req.safetyRelated && !(has(actor, OOS_SIGNERS) && req.signed))
      return forbid('A safety-related alarm is shelved only with a shift supervisor’s signature')
    const max = policy.shelveMaxHours[req.priority ?? 'low']
    if (req.hours > max)
      return invalid(`A ${req.priority ?? 'low'}-priority alarm may be shelved for at most ${max} h (site policy)`)
    return allow
  }
  if (req.kind === 'suppressed') {
    if (!has(actor, STARTERS.suppressed))
      return forbid('Only a safety engineer of the site records a suppression by design')
    if (req.changeRequestId === null)
      return invalid('A suppression by design is engineered under management of change: name its change request')
    return allow
  }
  if (!has(actor, STARTERS.out_of_service) || !req.signed)
    return forbid('Taking an alarm out of service needs a shift supervisor’s signature')
  if (req.hours > policy.outOfServiceMaxHours)
    return invalid(`An alarm may be out of service for at most ${policy.outOfServiceMaxHours} h before renewal`)
  return allow
}

export type AlarmStateAction = 'end'

/**
 * The actions on a stored state. Ending: a shelving by the operator who shelved it or a shift supervisor; a
 * suppression by a safety engineer; an out-of-service period by a technician, operator or shift supervisor (the
 * return-to-service record).
 */
export function alarmStateVerdicts(record: AlarmStateRecord, actor: AlarmStateActor): Verdicts<AlarmStateAction> {
  if (record.status !== 'active') return { end: blocked('This state has already ended') }
  if (record.kind === 'shelved')
    return {
      end:
        record.startedBy === actor.userId || has(actor, ['shift_supervisor'])
          ? allow
          : forbid('Only the operator who shelved the alarm or a shift supervisor unshelves it'),
    }
  if (record.kind === 'suppressed')
    return { end: has(actor, SUPPRESSORS) ? allow : forbid('Only a safety engineer ends a suppression by design') }
  return {
    end: has(actor, ['technician', 'operator', 'shift_supervisor'])
      ? allow
      : forbid('A technician, operator or shift supervisor records the return to service'),
  }
}

/** Past its time: an active state whose `until` has passed (shown on the handover and the home page). */
export function isOverdue(record: Pick<AlarmStateRecord, 'status' | 'until'>, now: Date): boolean {
  return record.status === 'active' && record.until.getTime() <= now.getTime()
}

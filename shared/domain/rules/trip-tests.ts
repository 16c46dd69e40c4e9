// The rule book of trip (proof) tests, degraded limits and test deferrals: who may do what to a record, in which
// state, under which site policy, at what time. The server calls it as the guard inside the locked transaction; the
// screens build their buttons from the same answers. Rules and their sources: docs/trip-tests.md.
import { subject } from '@casl/ability'
import type { AppAbility } from '../../abilities/index.ts'
import type { SitePolicy } from '../../schemas/sites.ts'
import type { Role } from '../../schemas/users.ts'
import { defaultGraceDays, maxGraceDays, type TestDueStatus } from '../due-dates.ts'
import { allow, blocked, firstRefusal, forbid, invalid, type Verdict, type Verdicts } from './verdict.ts'

// ---- one definition of "overdue" and "due soon" (home, handover, risk erosion, digest, schedule)

/**
 * Test statuses that count as overdue wherever the product counts overdue tests: past the due date and its grace
 * (or a deferred date), or never tested at all (a function never proven is at least as exposed as an overdue one).
 */
export const OVERDUE_TEST_STATUSES = ['overdue', 'never_tested'] as const satisfies readonly TestDueStatus[]
/** Test statuses that count as due soon: inside the look-ahead before the due date, or inside the grace period. */
export const DUE_SOON_TEST_STATUSES = ['due_soon', 'in_grace'] as const satisfies readonly TestDueStatus[]

/** True when a limit's test status counts as overdue (see OVERDUE_TEST_STATUSES). */
export function isTestOverdue(status: TestDueStatus): boolean {
  return (OVERDUE_TEST_STATUSES as readonly TestDueStatus[]).includes(status)
}
/** True when a limit's test status counts as due soon (see DUE_SOON_TEST_STATUSES). */
export function isTestDueSoon(status: TestDueStatus): boolean {
  return (DUE_SOON_TEST_STATUSES as readonly TestDueStatus[]).includes(status)
}

/**
 * The grace period of a limit under the site policy: its own value, else 0 for a code-set interval, else 0 for a
 * SIL-rated function unless the policy gives one (a late safety function needs an approved deferral, not an automatic
 * grace), else the policy's share of the interval at most the policy's days. Never more than half the interval.
 */
export function graceDaysFor(
  limit: { testGraceDays: number | null; codeSetInterval: boolean; testIntervalMonths: number; sil: number | null },
  policy: Pick<SitePolicy, 'testGraceFraction' | 'testGraceMaxDays' | 'testGraceFractionSil'>,
): number {
  const months = limit.testIntervalMonths
  const cap = maxGraceDays(months)
  if (limit.testGraceDays !== null) return Math.min(cap, limit.testGraceDays)
  if (limit.codeSetInterval) return defaultGraceDays(months, true)
  const fraction = limit.sil !== null ? policy.testGraceFractionSil : policy.testGraceFraction
  return Math.min(cap, policy.testGraceMaxDays, Math.floor((months * 730 * fraction) / 24))
}

// ---- actors

/** Who acts: their user id, their CASL ability, and the roles they hold at the record's site. */
export interface RuleActor {
  id: number
  ability: AppAbility
  roles: readonly Role[]
}

function can(actor: RuleActor, action: 'record' | 'witness' | 'accept', siteId: number): boolean {
  const fields: Record<string, unknown> = { siteId }
  return actor.ability.can(action, subject('TripTest', fields))
}

// ---- trip test records

export type TripTestMeaning = 'performed' | 'witnessed' | 'returned_to_service' | 'accepted'
export type TripTestStatus = 'recorded' | 'signed' | 'completed'

/** What the rule book needs of a trip-test record. */
export interface TripTestRuleRecord {
  siteId: number
  status: TripTestStatus
  recordedById: number
  sil: number | null
  signatures: readonly { meaning: string; userId: number }[]
  /** brought from a former system by a history import: a record of the past, never edited or signed here */
  imported?: boolean
}

export const TRIP_TEST_ACTIONS = [
  'edit',
  'attach',
  'signPerformed',
  'signWitnessed',
  'signReturnedToService',
  'signAccepted',
] as const
export type TripTestAction = (typeof TRIP_TEST_ACTIONS)[number]

/** The signature meaning each signing action gives. */
export const MEANING_OF: Record<Exclude<TripTestAction, 'edit' | 'attach'>, TripTestMeaning> = {
  signPerformed: 'performed',
  signWitnessed: 'witnessed',
  signReturnedToService: 'returned_to_service',
  signAccepted: 'accepted',
}

/** A witness is required for every limit, for SIL-rated ones only, or never (site policy). */
export function witnessRequired(policy: Pick<SitePolicy, 'witnessRequiredFor'>, sil: number | null): boolean {
  return policy.witnessRequiredFor === 'all' || (policy.witnessRequiredFor === 'sil_only' && sil !== null)
}

/**
 * A record is complete when performed, returned to service, accepted by operations and, where required, witnessed.
 */
export function isComplete(
  held: ReadonlySet<string>,
  policy: Pick<SitePolicy, 'witnessRequiredFor'>,
  sil: number | null,
): boolean {
  return (
    held.has('performed') &&
    held.has('returned_to_service') &&
    held.has('accepted') &&
    (!witnessRequired(policy, sil) || held.has('witnessed'))
  )
}

/**
 * Every action on a trip-test record, answered for this actor:
 * - edit: the technician who recorded it, before signing as performer.
 * - attach: a technician of the site, before the record is signed (attachments are covered by the content hash).
 * - signPerformed: the technician who recorded it, once.
 * - signWitnessed: a witness role, after the performer, never the performer (nobody witnesses their own test).
 * - signReturnedToService: a technician of the site, after the performer: forces, jumpers and bypasses removed.
 * - signAccepted: operations (shift supervisor, operator), after the return-to-service check, never the performer:
 *   the person who performed a test does not also accept the equipment back (separation of duties, common practice;
 *   docs/trip-tests.md#who-signs).
 */
export function tripTestActions(
  record: TripTestRuleRecord,
  actor: RuleActor,
  _policy: Pick<SitePolicy, 'witnessRequiredFor'>,
  _now: Date,
): Verdicts<TripTestAction> {
  const held = new Map(record.signatures.map((s) => [s.meaning, s.userId]))
  const isRecorder = record.recordedById === actor.id
  const performerId = held.get('performed')
  const performed = performerId !== undefined
  const already = (meaning: TripTestMeaning) => () =>
    held.has(meaning) ? blocked(`The record is already signed as ${meaning.replaceAll('_', ' ')}`) : allow
  const afterPerformer = () => (performed ? allow : blocked('The performer signs first'))
  const technician = () =>
    record.imported
      ? blocked('An imported test is a record of the former system: it is not edited or signed here')
      : can(actor, 'record', record.siteId)
        ? allow
        : forbid('Only a maintenance technician of this site does this')
  const notImported = () =>
    record.imported ? blocked('An imported test is a record of the former system: it is not signed here') : allow
  return {
    edit: firstRefusal(
      technician,
      () => (isRecorder ? allow : forbid('Only the technician who recorded the test edits it')),
      () =>
        record.status === 'recorded' ? allow : blocked('A signed test record is locked; record a new test instead'),
    ),
    attach: firstRefusal(technician, () =>
      performed ? blocked('Attachments are added before the performer signs: the signature covers them') : allow,
    ),
    signPerformed: firstRefusal(
      technician,
      () => (isRecorder ? allow : forbid('The technician who performed and recorded the test signs it as performer')),
      already('performed'),
    ),
    signWitnessed: firstRefusal(
      notImported,
      () =>
        can(actor, 'witness', record.siteId)
          ? allow
          : forbid('Your roles at this site do not include witnessing tests'),
      () => (isRecorder || performerId === actor.id ? forbid('Nobody witnesses their own test') : allow),
      already('witnessed'),
      afterPerformer,
    ),
    signReturnedToService: firstRefusal(technician, already('returned_to_service'), afterPerformer),
    signAccepted: firstRefusal(
      notImported,
      () =>
        can(actor, 'accept', record.siteId)
          ? allow
          : forbid('A shift supervisor or operator of this site accepts the equipment back'),
      () =>
        isRecorder || performerId === actor.id
          ? forbid('The person who performed the test does not also accept the equipment back')
          : allow,
      already('accepted'),
      afterPerformer,
      () =>
        held.has('returned_to_service')
          ? allow
          : blocked('Operations accept the equipment back after the return-to-service check is signed'),
    ),
  }
}

// ---- degraded limits

/** What the rule book needs of a degraded state. */
export interface DegradationRuleRecord {
  siteId: number
  cleared: boolean
  openedAt: Date
  measuresSigned: boolean
  /** the repair deadline goes beyond the MTTR assumed for the function */
  deadlineBeyondMttr: boolean
  deadlineApproved: boolean
}

export const DEGRADATION_ACTIONS = ['signMeasures', 'approveDeadline'] as const
export type DegradationAction = (typeof DEGRADATION_ACTIONS)[number]

/**
 * The repair deadline against the MTTR assumed for the function: the largest mean time to restoration of its
 * subsystems (the reliability figures assume a dangerous failure is repaired within it; IEC 61508-6 Annex B uses MTTR
 * and MRT this way). The deadline is the end of its calendar day in the site's time zone, given as `deadlineEnd`.
 * No subsystems, no MTTR: nothing to hold the deadline against.
 */
export function checkRepairDeadline(
  openedAt: Date,
  deadlineEnd: Date,
  mttrHours: number | null,
): { beyondMttr: boolean; mttrEnd: Date | null; warning: string | null } {
  if (mttrHours === null) return { beyondMttr: false, mttrEnd: null, warning: null }
  const mttrEnd = new Date(openedAt.getTime() + mttrHours * 3_600_000)
  const beyondMttr = deadlineEnd.getTime() > mttrEnd.getTime()
  return {
    beyondMttr,
    mttrEnd,
    warning: beyondMttr
      ? `The repair deadline lies beyond the ${mttrHours} h MTTR assumed for this function: the plant manager signs ` +
        'to accept the longer exposure'
      : null,
  }
}

/** The function's assumed MTTR: the largest of its subsystems' MTTR, or null without subsystems. */
export function functionMttrHours(subsystems: readonly { mttrHours: number }[]): number | null {
  return subsystems.length ? Math.max(...subsystems.map((s) => s.mttrHours)) : null
}

/**
 * May this actor approve a repair deadline beyond the MTTR at all (before the degraded state is read)? The plant
 * manager of the site. The server asks this before the signature password, then approveDeadline in the transaction.
 */
export function deadlineApprovalStanding(actor: Pick<RuleActor, 'roles'>): Verdict {
  return actor.roles.includes('plant_manager')
    ? allow
    : forbid('The plant manager approves a repair deadline beyond the MTTR')
}

/**
 * Actions on a degraded limit:
 * - signMeasures: a shift supervisor of the site, while degraded (they may sign again to revise the measures).
 * - approveDeadline: the plant manager of the site, when the signed deadline lies beyond the function's MTTR.
 */
export function degradationActions(
  d: DegradationRuleRecord,
  actor: RuleActor,
  _policy: unknown,
  _now: Date,
): Verdicts<DegradationAction> {
  const open = () => (d.cleared ? blocked('The limit is no longer degraded') : allow)
  return {
    signMeasures: firstRefusal(
      () =>
        actor.roles.includes('shift_supervisor')
          ? allow
          : forbid('A shift supervisor of this site records the compensating measures of a degraded limit'),
      open,
    ),
    approveDeadline: firstRefusal(
      () => deadlineApprovalStanding(actor),
      open,
      () => (d.measuresSigned ? allow : blocked('A shift supervisor signs the measures and the deadline first')),
      () => (d.deadlineBeyondMttr ? allow : blocked('The repair deadline lies within the assumed MTTR')),
      () => (d.deadlineApproved ? blocked('The repair deadline is already approved') : allow),
    ),
  }
}

// ---- test deferrals

export type DeferralStatus = 'requested' | 'approved' | 'rejected' | 'lapsed'
export type SilKey = 'none' | 'sil1' | 'sil2' | 'sil3' | 'sil4'
export const silKey = (sil: number | null): SilKey => (sil === null ? 'none' : (`sil${sil}` as SilKey))

/** The role that approves a deferral of a function of this SIL (site policy). */
export function deferralApproverRole(policy: Pick<SitePolicy, 'deferralApproverRole'>, sil: number | null): Role {
  return policy.deferralApproverRole[silKey(sil)]
}

/** The longest deferral: the policy's share of the interval, in whole days (at 730 h per month). */
export function maxDeferralDays(policy: Pick<SitePolicy, 'deferralMaxFraction'>, intervalMonths: number): number {
  return Math.floor((intervalMonths * 730 * policy.deferralMaxFraction) / 24)
}

/** What a deferral request is checked against. */
export interface DeferralRequestCheck {
  siteId: number
  limitActive: boolean
  /** due date from the tests (without any deferral); null when never tested */
  dueDate: string | null
  today: string
  newDueDate: string
  intervalMonths: number
  /** a deferral of this limit is requested, or approved and still in force */
  openDeferral: boolean
  /** days between dueDate and newDueDate */
  extensionDays: number
}

/**
 * May this actor ask for a deferral of this limit at all (before the dates are chosen)? Technicians and safety
 * engineers of the site, for an active limit with a due date and no open deferral. The limit page offers the
 * request where this allows it.
 */
export function deferralRequestStanding(
  c: Pick<DeferralRequestCheck, 'limitActive' | 'dueDate' | 'openDeferral'>,
  actor: Pick<RuleActor, 'roles'>,
): Verdict {
  return firstRefusal(
    () =>
      actor.roles.includes('technician') || actor.roles.includes('safety_engineer')
        ? allow
        : forbid('A maintenance technician or safety engineer of this site requests a test deferral'),
    () => (c.limitActive ? allow : blocked('Only an active limit has a test to defer')),
    () =>
      c.dueDate === null
        ? blocked('The limit has never passed a full test: there is no due date to defer; test it')
        : allow,
    () => (c.openDeferral ? blocked('The limit already has an open deferral; one at a time') : allow),
  )
}

/** May this actor request this deferral? Technicians and safety engineers of the site request. */
export function checkDeferralRequest(
  c: DeferralRequestCheck,
  actor: RuleActor,
  policy: Pick<SitePolicy, 'deferralMaxFraction'>,
): Verdict {
  const max = maxDeferralDays(policy, c.intervalMonths)
  return firstRefusal(
    () => deferralRequestStanding(c, actor),
    () => (c.newDueDate > c.today ? allow : invalid('The new due date must lie in the future')),
    () => (c.extensionDays > 0 ? allow : invalid('The new due date must lie after the current due date')),
    () =>
      c.extensionDays <= max
        ? allow
        : invalid(
            `A deferral may move the due date by at most ${max} days (site policy); this asks for ${c.extensionDays}`,
          ),
  )
}

/** What the rule book needs of a deferral. */
export interface DeferralRuleRecord {
  siteId: number
  status: DeferralStatus
  requestedById: number
  requiredRole: Role
}

export const DEFERRAL_ACTIONS = ['approve', 'reject'] as const
export type DeferralAction = (typeof DEFERRAL_ACTIONS)[number]

/**
 * Approval and rejection of a deferral: by a holder of the role the site policy sets for the function's SIL,
 * never by the requester, only while requested.
 */
export function deferralActions(
  d: DeferralRuleRecord,
  actor: RuleActor,
  _policy: unknown,
  _now: Date,
): Verdicts<DeferralAction> {
  const decide = firstRefusal(
    () =>
      actor.roles.includes(d.requiredRole)
        ? allow
        : forbid(`A deferral of this function is decided by a ${d.requiredRole.replaceAll('_', ' ')} of this site`),
    () => (d.requestedById === actor.id ? forbid('Nobody decides a deferral they requested') : allow),
    () => (d.status === 'requested' ? allow : blocked(`The deferral is already ${d.status}`)),
  )
  return { approve: decide, reject: decide }
}

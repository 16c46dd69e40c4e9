import { subject } from '@casl/ability'
import type { AppAbility } from '../../abilities/index.ts'
import type { LimitStatus } from '../operating-window.ts'
import { allow, blocked, forbid, firstRefusal, type Verdict, type Verdicts } from './verdict.ts'

/**
 * The rule book of the register (docs/register.md#the-rule-book): what may be done to a limit in each of its states,
 * by whom. A limit is drafted as `proposed` and edited or deleted freely while it is a draft; an implemented change
 * request puts it in service (`active`), and from then on it changes, and is retired, only through a change request;
 * a `retired` limit is kept for the record. The server calls these answers as the guard inside the locked
 * transaction; the limit page and the limit form build their buttons and read-only state from the same answers.
 */
export const LIMIT_ACTIONS = [
  'edit',
  'delete',
  'proposeChange',
  'proposeCommissioning',
  'raiseProposal',
  'recordTripTest',
  'setDemandAssumptions',
] as const
export type LimitAction = (typeof LIMIT_ACTIONS)[number]

/** What the rules read of a limit (the limit as the API sends it satisfies this). */
export interface LimitRuleRecord {
  siteId: number
  tag: string
  status: LimitStatus
}

/** Who acts: their CASL ability (their roles at each site); no rule of the register reads who they are. */
export interface LimitActor {
  ability: AppAbility
}

type Subject = 'Limit' | 'Instrument' | 'ChangeRequest' | 'ChangeProposal' | 'TripTest'
const can = (actor: LimitActor, action: 'create' | 'update' | 'delete' | 'record', name: Subject, siteId: number) => {
  const fields: Record<string, unknown> = { siteId }
  return actor.ability.can(action, subject(name, fields) as never)
}

/**
 * An active limit is in service: only an active limit is trip-tested, has its tests deferred, is bypassed, counts in
 * the demand rates and is reconciled against the plant (docs/register.md#the-rule-book).
 */
export function inService(l: Pick<LimitRuleRecord, 'status'>): boolean {
  return l.status === 'active'
}

/** Only an active limit is trip-tested (the state half of `recordTripTest`, also checked when a record is edited). */
export function tripTestableVerdict(l: Pick<LimitRuleRecord, 'tag' | 'status'>): Verdict {
  return inService(l) ? allow : blocked(`Limit ${l.tag} is ${l.status}; only an active limit is trip-tested`)
}

/**
 * Only a draft (proposed) limit is edited in the register, by hand or by an import: an active limit changes through a
 * change request, a retired one is kept as it is (the state half of `edit`).
 */
export function draftVerdict(l: Pick<LimitRuleRecord, 'tag' | 'status'>): Verdict {
  if (l.status === 'proposed') return allow
  return blocked(
    l.status === 'active'
      ? `Limit ${l.tag} is active: it changes only through a change request`
      : `Limit ${l.tag} is retired and kept for the record; it is not edited`,
  )
}

/**
 * Only a draft (proposed) limit is put in service by a change request's create item (the state half of
 * `proposeCommissioning`, also checked when the item is added).
 */
export function commissionableVerdict(l: Pick<LimitRuleRecord, 'tag' | 'status'>): Verdict {
  return l.status === 'proposed'
    ? allow
    : blocked(`Limit ${l.tag} is ${l.status}; only a draft (proposed) limit is put in service by a change request.`)
}

/**
 * Only an active limit is changed or retired by a change request's item (the state half of `proposeChange`, also
 * checked when the item is added): a draft is edited in the register, a retired limit changes no more.
 */
export function changeableVerdict(l: Pick<LimitRuleRecord, 'tag' | 'status'>): Verdict {
  if (l.status === 'retired') return notRetiredVerdict(l)
  if (l.status === 'active') return allow
  return blocked(`Limit ${l.tag} is a draft: it is edited in the register, or put in service by a change request.`)
}

/** A retired limit is kept for the record: no change request, proposal or edit reaches it. */
export function notRetiredVerdict(l: Pick<LimitRuleRecord, 'tag' | 'status'>): Verdict {
  return l.status === 'retired'
    ? blocked(`Limit ${l.tag} is retired and kept for the record; it changes no more.`)
    : allow
}

/**
 * The hazard study's demand and spurious-trip rates and the commissioning date of a limit are set while it is a draft
 * or in service (the study precedes commissioning, and a revised study updates them); a retired limit's figures are
 * kept as they stood when it left service (the state half of `setDemandAssumptions`).
 */
export function assumptionsEditableVerdict(l: Pick<LimitRuleRecord, 'tag' | 'status'>): Verdict {
  return l.status === 'retired'
    ? blocked(`Limit ${l.tag} is retired; its hazard-study rates are kept for the record as they stood.`)
    : allow
}

const roleFor = (ok: boolean, reason: string) => () => (ok ? allow : forbid(reason))

/**
 * Every action on a limit for this actor:
 * - edit: a safety engineer of the site, while the limit is a draft (proposed); an active limit changes through a
 *   change request, a retired one is kept as it is.
 * - delete: a safety engineer of the site, while the limit is a draft; an active limit is retired through a change
 *   request.
 * - proposeChange: a safety engineer of the site proposes a change request that changes or retires an active limit.
 * - proposeCommissioning: a safety engineer of the site proposes the change request that puts a draft in service.
 * - raiseProposal: operators, technicians, control engineers and shift supervisors of the site raise a change
 *   proposal about a limit that is not retired.
 * - recordTripTest: a maintenance technician of the site records a trip test of an active limit.
 * - setDemandAssumptions: a safety engineer of the site sets the hazard study's demand and spurious-trip rates and the
 *   commissioning date of a limit that is not retired.
 */
export function limitRules(l: LimitRuleRecord, actor: LimitActor): Verdicts<LimitAction> {
  const draft = (refusal: string) => () => (l.status === 'proposed' ? allow : blocked(refusal))
  // both kinds of change request are proposed by the same role
  const changeRequester = roleFor(
    can(actor, 'create', 'ChangeRequest', l.siteId),
    'Only a safety engineer of this site proposes a change request.',
  )
  return {
    edit: firstRefusal(
      roleFor(can(actor, 'update', 'Limit', l.siteId), 'Only a safety engineer of this site edits a draft limit.'),
      () => draftVerdict(l),
    ),
    delete: firstRefusal(
      roleFor(can(actor, 'delete', 'Limit', l.siteId), 'Only a safety engineer of this site deletes a draft limit.'),
      draft('Only draft (proposed) limits can be deleted; retire an active limit through a change request'),
    ),
    proposeChange: firstRefusal(changeRequester, () => changeableVerdict(l)),
    proposeCommissioning: firstRefusal(changeRequester, () => commissionableVerdict(l)),
    raiseProposal: firstRefusal(
      roleFor(
        can(actor, 'create', 'ChangeProposal', l.siteId),
        'Operators, technicians, control engineers and shift supervisors of this site raise change proposals.',
      ),
      () => notRetiredVerdict(l),
    ),
    recordTripTest: firstRefusal(
      roleFor(can(actor, 'record', 'TripTest', l.siteId), 'Only a maintenance technician of this site records tests.'),
      () => tripTestableVerdict(l),
    ),
    setDemandAssumptions: firstRefusal(
      roleFor(
        can(actor, 'update', 'Limit', l.siteId),
        "Only a safety engineer of this site sets a limit's hazard-study rates.",
      ),
      () => assumptionsEditableVerdict(l),
    ),
  }
}

/** An action as a screen offers it: shown or not, and its verdict (enabled, or disabled with the reason). */
export interface LimitOffer {
  offered: boolean
  verdict: Verdict
}

/**
 * What the limit page offers (docs/register.md#the-rule-book): an action is offered (its button shown) where it
 * applies to the limit's state and the person holds the role for it at the site; it is enabled when the rule book
 * allows it, otherwise disabled with the verdict's reason. A refusal for the role hides the button; a refusal for the
 * state shows it disabled only where the state is one the action applies to.
 */
export function limitOffers(
  l: LimitRuleRecord,
  actor: LimitActor,
): Record<LimitAction, LimitOffer> & { verdicts: Verdicts<LimitAction> } {
  const v = limitRules(l, actor)
  const offer = (action: LimitAction, applies: boolean): LimitOffer => ({
    offered: applies && (v[action].allowed || v[action].status !== 403),
    verdict: v[action],
  })
  return {
    verdicts: v,
    edit: offer('edit', l.status === 'proposed'),
    delete: offer('delete', l.status === 'proposed'),
    proposeChange: offer('proposeChange', l.status === 'active'),
    proposeCommissioning: offer('proposeCommissioning', l.status === 'proposed'),
    raiseProposal: offer('raiseProposal', l.status !== 'retired'),
    recordTripTest: offer('recordTripTest', inService(l)),
    setDemandAssumptions: offer('setDemandAssumptions', l.status !== 'retired'),
  }
}

/**
 * Editing an instrument in the register: a safety engineer of the site, while no active limit stands on it; an
 * instrument behind an active limit changes through a change request (docs/register.md#the-rule-book).
 */
export function instrumentEditVerdict(
  instrument: { siteId: number; tag: string },
  activeLimitTags: readonly string[],
  actor: LimitActor,
): Verdict {
  if (!can(actor, 'update', 'Instrument', instrument.siteId))
    return forbid('Only a safety engineer of this site edits an instrument.')
  if (activeLimitTags.length)
    return blocked(
      `Instrument ${instrument.tag} feeds active limits (${activeLimitTags.join(', ')}): ` +
        'change it through a change request',
    )
  return allow
}

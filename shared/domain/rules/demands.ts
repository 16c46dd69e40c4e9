/**
 * Rule book of the demand and trip log (docs/demands.md): who may record an event, classify it and credit a
 * successful demand as a proof test. Roles come from the CASL ability; the rest from the record, the site policy
 * and the clock.
 */
import { subject } from '@casl/ability'
import type { AppAbility } from '../../abilities/index.ts'
import { allow, blocked, firstRefusal, forbid, invalid, type Verdict, type Verdicts } from './verdict.ts'

export type DemandKind = 'real_demand' | 'spurious_trip' | 'dangerous_failure' | 'failure_on_demand'
export type DemandAction = 'record' | 'classify' | 'credit'

/** What the rule book needs to know about an event (null when one is about to be recorded). */
export interface DemandFacts {
  siteId: number
  kind: DemandKind
  outcome: 'acted' | 'failed_to_act' | null
  occurredAt: Date
  wholeFunction: boolean
  status: 'recorded' | 'classified'
  counts: boolean | null
  creditedAsTest: boolean
  recordedBy: number
}

export interface DemandActor {
  userId: number
  ability: AppAbility
}

export interface DemandPolicy {
  demandCreditAllowed: boolean
}

/** May this actor record an event of this kind at this time on a limit of this site? */
export function canRecordDemand(
  actor: DemandActor,
  input: { siteId: number; kind: DemandKind; outcome: 'acted' | 'failed_to_act' | null | undefined; occurredAt: Date },
  now: Date,
): Verdict {
  return firstRefusal(
    () =>
      actor.ability.can('record', subject('Demand', { siteId: input.siteId }) as never)
        ? allow
        : forbid('Operators, shift supervisors and safety engineers of the site record demands and trips'),
    () => (input.occurredAt.getTime() > now.getTime() ? invalid('An event cannot be recorded in the future') : allow),
    () =>
      input.kind === 'real_demand' && !input.outcome
        ? invalid('Say whether the function acted or failed to act on the demand')
        : allow,
    () =>
      input.kind !== 'real_demand' && input.outcome
        ? invalid('Only a real demand has an outcome (acted or failed to act)')
        : allow,
  )
}

/** Every action on a recorded event, for the server's guard and the client's buttons. */
export function demandVerdicts(
  d: DemandFacts,
  actor: DemandActor,
  policy: DemandPolicy,
  now: Date,
): Verdicts<Exclude<DemandAction, 'record'>> {
  const engineer = (verb: 'classify' | 'credit', text: string): Verdict =>
    actor.ability.can(verb, subject('Demand', { siteId: d.siteId }) as never) ? allow : forbid(text)
  const classify = firstRefusal(
    () => engineer('classify', 'Safety engineers of the site classify demands and trips'),
    () => (d.status === 'classified' ? blocked('This event is already classified') : allow),
  )
  const credit = firstRefusal(
    () => engineer('credit', 'Safety engineers of the site credit a demand as a proof test'),
    () =>
      policy.demandCreditAllowed ? allow : blocked('The site policy does not allow crediting a demand as a proof test'),
    () =>
      d.kind === 'real_demand' && d.outcome === 'acted'
        ? allow
        : blocked('Only a real demand on which the function acted can be credited as a proof test'),
    () =>
      d.wholeFunction
        ? allow
        : blocked(
            'The demand did not exercise the whole function (sensor to final element); it cannot count as a test',
          ),
    () =>
      d.status === 'classified' && d.counts === true
        ? allow
        : blocked('Classify the demand as a genuine demand before crediting it'),
    () => (d.creditedAsTest ? blocked('This demand is already credited as a proof test') : allow),
    () => (d.occurredAt.getTime() > now.getTime() ? blocked('The demand lies in the future') : allow),
  )
  return { classify, credit }
}

import { subject } from '@casl/ability'
import type { AppAbility } from '../../abilities/index.ts'
import type { ProposalStatus } from '../../schemas/change-proposals.ts'
import { allow, blocked, forbid, type Verdict, type Verdicts } from './verdict.ts'

/**
 * The rule book of change proposals (docs/change-requests.md#change-proposals). Anyone at the site with a part in
 * operations or maintenance raises a proposal; only a safety engineer of the site takes it up (links the change
 * request developed from it) or declines it with a reason, once.
 */
export const PROPOSAL_ACTIONS = ['takeUp', 'decline'] as const
export type ProposalAction = (typeof PROPOSAL_ACTIONS)[number]

export interface ProposalRuleRecord {
  siteId: number
  status: ProposalStatus
}
export interface ProposalActor {
  id: number
  ability: AppAbility
}

const at = (siteId: number) => subject('ChangeProposal', { siteId }) as never

/** Whether the actor may raise a proposal at the site. */
export function raiseProposalVerdict(siteId: number, actor: ProposalActor): Verdict {
  return actor.ability.can('create', at(siteId))
    ? allow
    : forbid('Operators, technicians, control engineers and shift supervisors of this site raise change proposals.')
}

function decideVerdict(p: ProposalRuleRecord, actor: ProposalActor, verb: string): Verdict {
  if (!actor.ability.can('review', at(p.siteId)))
    return forbid(`Only a safety engineer of this site ${verb} a change proposal.`)
  if (p.status !== 'open')
    return blocked(`This proposal is ${p.status === 'taken_up' ? 'taken up' : 'declined'} already.`)
  return allow
}

/** Every action on a proposal for this actor. */
export function changeProposalRules(p: ProposalRuleRecord, actor: ProposalActor): Verdicts<ProposalAction> {
  return { takeUp: decideVerdict(p, actor, 'takes up'), decline: decideVerdict(p, actor, 'declines') }
}

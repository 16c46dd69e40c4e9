// The rule book of findings (docs/reconciliation.md#findings): who may acknowledge, link a change request to, or
// accept a finding, and what a reconciliation run does to a finding it sees again or no longer sees.

import type { FindingState } from '../../schemas/reconciliation.ts'
import { allow, blocked, forbid, type Verdict, type Verdicts } from './verdict.ts'

export interface FindingRecord {
  state: FindingState
  kind: string
  /** Seen by the latest run of its source. */
  present: boolean
  deviceValue: string | null
  changeRequestId: number | null
}

/** What the actor holds at the finding's site. */
export interface FindingActor {
  /** Safety engineer at the site: acknowledges findings and links change requests. */
  isSafetyEngineer: boolean
  /** Safety engineer or plant manager at the site: accepts a difference with a signed reason. */
  mayAccept: boolean
}

export type FindingAction = 'acknowledge' | 'linkChange' | 'accept'

const CLOSED: FindingState[] = ['resolved', 'accepted']

/** Every action on a finding, for this actor now. */
export function findingVerdicts(f: FindingRecord, actor: FindingActor): Verdicts<FindingAction> {
  const closed = CLOSED.includes(f.state)
  const closedReason =
    `The finding is ${f.state}; ` + 'it reopens by itself if a later reconciliation sees the difference again.'
  return {
    acknowledge: !actor.isSafetyEngineer
      ? forbid('Only a safety engineer of the site acknowledges findings.')
      : closed
        ? blocked(closedReason)
        : f.state === 'acknowledged'
          ? blocked('The finding is already acknowledged.')
          : allow,
    linkChange: !actor.isSafetyEngineer
      ? forbid('Only a safety engineer of the site links a change request to a finding.')
      : closed
        ? blocked(closedReason)
        : f.state !== 'acknowledged'
          ? blocked('Acknowledge the finding first: somebody owns it before it is resolved.')
          : f.kind === 'unreachable'
            ? blocked('An unreachable source is resolved by the next run that reads it, not by a change request.')
            : allow,
    accept: !actor.mayAccept
      ? forbid('Only a safety engineer or the plant manager of the site accepts a difference.')
      : closed
        ? blocked(closedReason)
        : f.state !== 'acknowledged'
          ? blocked('Acknowledge the finding first: somebody owns it before it is accepted.')
          : allow,
  }
}

/** The verdict for one action. */
export function findingVerdict(f: FindingRecord, actor: FindingActor, action: FindingAction): Verdict {
  return findingVerdicts(f, actor)[action]
}

/** What a run does to a finding whose difference it sees. */
export type SeenOutcome = 'still_open' | 'reopen' | 'still_accepted'

/**
 * A run sees the difference again. A resolved finding reopens. An accepted finding stays accepted while the source
 * holds the same value it was accepted with and the difference never went away; otherwise it reopens.
 */
export function onSeenAgain(f: FindingRecord, deviceValue: string | null): SeenOutcome {
  if (f.state === 'resolved') return 'reopen'
  if (f.state === 'accepted') return f.present && f.deviceValue === deviceValue ? 'still_accepted' : 'reopen'
  return 'still_open'
}

/** What a run does to a finding whose difference it no longer sees. */
export type AbsentOutcome = 'resolve_by_change_request' | 'resolve_by_device_correction' | 'stays'

/**
 * A run compared the tag and no longer sees the difference: an open or acknowledged finding is resolved, by its
 * linked change request when it has one (the register followed the plant), else as corrected on the device (the
 * plant followed the register), confirmed by this run. A closed finding stays as it is (absent).
 */
export function onAbsent(f: FindingRecord, explainingChangeRequestId: number | null = null): AbsentOutcome {
  if (CLOSED.includes(f.state)) return 'stays'
  return f.changeRequestId !== null || explainingChangeRequestId !== null
    ? 'resolve_by_change_request'
    : 'resolve_by_device_correction'
}

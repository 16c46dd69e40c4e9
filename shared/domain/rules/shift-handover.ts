import { subject } from '@casl/ability'
import type { AppAbility } from '../../abilities/index.ts'
import type { ShiftHandoverStatus } from '../../schemas/shift-handover.ts'
import { allow, blocked, forbid, type Verdict } from './verdict.ts'

// The shift handover's rules, in one place (docs/shift-handover.md#rules): the outgoing shift supervisor hands over
// what they were shown, the incoming one (another person) accepts it while the state is still the one handed over.

export type ShiftHandoverAction = 'handOver' | 'accept'

export interface HandoverActor {
  id: number
  ability: AppAbility
}

function atSite(siteId: number): Record<string, unknown> {
  const fields: Record<string, unknown> = { siteId }
  return subject('ShiftHandover', fields)
}

/**
 * Hand over areas of a site: a shift supervisor of the site, signing the state they were shown. `shownHash` is the
 * hash of the state on their screen, `liveHash` that of the state now (omit both to ask whether the actor may at all).
 */
export function handOverVerdict(
  h: { siteId: number },
  actor: HandoverActor,
  hashes?: { shownHash: string; liveHash: string },
): Verdict {
  if (!actor.ability.can('hand_over', atSite(h.siteId)))
    return forbid('The outgoing shift supervisor of the site hands over')
  if (hashes && hashes.shownHash !== hashes.liveHash)
    return blocked('The state of protection changed since it was shown to you; review it again before signing')
  return allow
}

/** What the rules need to know about a handover record. */
export interface HandoverFacts {
  siteId: number
  status: ShiftHandoverStatus
  handedOverById: number
  contentHash: string
  /** Whether the live state of its areas still hashes to the state handed over. */
  stateUnchanged: boolean
}

/**
 * Accept a handover: a shift supervisor of the site other than the one who handed over, while it waits for acceptance
 * and the state of protection is still the one handed over. `shownHash` is the content hash on the actor's screen.
 */
export function acceptVerdict(h: HandoverFacts, actor: HandoverActor, shownHash?: string): Verdict {
  if (!actor.ability.can('accept', atSite(h.siteId)))
    return forbid('The incoming shift supervisor of the site accepts the handover')
  if (h.handedOverById === actor.id) return forbid('You handed this over; the incoming shift supervisor accepts it')
  if (h.status === 'accepted') return blocked('This handover is accepted already')
  if (h.status === 'superseded') return blocked('A later handover of these areas replaced this one')
  if (!h.stateUnchanged)
    return blocked(
      'The state of protection changed since it was handed over; the outgoing shift supervisor hands over again',
    )
  if (shownHash !== undefined && shownHash !== h.contentHash)
    return blocked('What you were shown is not what was handed over; reload and review it again')
  return allow
}

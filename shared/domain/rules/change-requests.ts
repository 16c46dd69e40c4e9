import { subject } from '@casl/ability'
import type { AppAbility } from '../../abilities/index.ts'
import { DISCIPLINE_REVIEWERS } from '../../abilities/index.ts'
import {
  DISCIPLINES,
  type ChangeStatus,
  type ChangeType,
  type ChangeView,
  type ChecklistGroup,
  type Discipline,
  reviewMeaning,
} from '../../schemas/change-requests.ts'
import { ROLE_LABELS, type Role } from '../../schemas/users.ts'
import { allow, blocked, forbid, invalid, type Verdict, type Verdicts } from './verdict.ts'

/**
 * The rule book of management of change (docs/change-requests.md#the-rule-book): given a request, the person acting,
 * the site's policy and now, it answers every action with a Verdict. The server calls it inside the locked
 * transaction before writing; the request page builds its buttons and their reasons from the same answers.
 */
export const CHANGE_ACTIONS = [
  'edit',
  'submit',
  'withdraw',
  'attach',
  'tick',
  'approve',
  'reject',
  'implement',
  'implementAll',
  'close',
  'proposeReversal',
] as const
export type ChangeAction = (typeof CHANGE_ACTIONS)[number]

/** What the rules read of a request (the request as the API sends it satisfies this). */
export interface ChangeRuleRecord {
  siteId: number
  type: ChangeType
  status: ChangeStatus
  proposerId: number
  editorIds: number[]
  approvedAt: string | null
  approvalExpiresAt: string | null
  /** a temporary change's end */
  expiresAt: string | null
  /** the requests that reverse this one (a temporary change), with their state */
  reversals: { id: number; status: ChangeStatus }[]
  items: { id: number; kind: string; implementedAt: string | null; stale: boolean }[]
  signatures: { userId: number; meaning: string; voided: boolean }[]
  checklist: { item: string; label: string; group: ChecklistGroup; doneAt: string | null }[]
  /** the discipline reviews needed before approval (none when absent) */
  reviewsRequired?: Discipline[]
}

export interface ChangeActor {
  id: number
  ability: AppAbility
}

/** The CASL subject of a request: separation of duties and the emergency rule read these fields. */
export function changeRequestSubject(
  cr: Pick<ChangeRuleRecord, 'siteId' | 'proposerId' | 'editorIds'> & {
    type?: ChangeType
    status?: ChangeStatus
  },
) {
  return subject('ChangeRequest', {
    siteId: cr.siteId,
    proposerId: cr.proposerId,
    editorIds: cr.editorIds,
    type: cr.type,
    status: cr.status,
  }) as never
}

const can = (actor: ChangeActor, action: Parameters<AppAbility['can']>[0], cr: ChangeRuleRecord) =>
  actor.ability.can(action, changeRequestSubject(cr))
const siteOnly = (cr: ChangeRuleRecord) => subject('ChangeRequest', { siteId: cr.siteId }) as never

const signed = (cr: ChangeRuleRecord, userId: number, meaning: string) =>
  cr.signatures.some((s) => !s.voided && s.userId === userId && s.meaning === meaning)

/** Labels of the checklist items of a group still open (neither done nor marked not applicable). */
export function openChecks(cr: Pick<ChangeRuleRecord, 'checklist'>, group: ChecklistGroup): string[] {
  return cr.checklist.filter((c) => c.group === group && !c.doneAt).map((c) => c.label)
}

const emergencyFirst = (cr: ChangeRuleRecord) => cr.type === 'emergency' && cr.status === 'submitted'
const emergencyAfterTheFact = (cr: ChangeRuleRecord) =>
  cr.type === 'emergency' && cr.status === 'implemented' && !cr.approvedAt

function mayEdit(cr: ChangeRuleRecord, actor: ChangeActor, verb: string): Verdict {
  if (!can(actor, 'update', cr)) return forbid(`Only a safety engineer of this site may ${verb} this change request.`)
  if (cr.status !== 'draft' && cr.status !== 'submitted')
    return blocked(`A ${cr.status} change request cannot be ${verb === 'edit' ? 'edited' : 'withdrawn'}.`)
  return allow
}

/** Role and separation of duties of an approver or rejecter (403 answers). */
function approverChecks(cr: ChangeRuleRecord, actor: ChangeActor): Verdict {
  if (!actor.ability.can('approve', siteOnly(cr)))
    return forbid('Only an approver of this site may approve or reject this change.')
  if (cr.proposerId === actor.id)
    return forbid('Nobody approves a change they proposed: an independent second person must sign.')
  if (cr.editorIds.includes(actor.id))
    return forbid(
      'Nobody approves a change they edited (attachments included): an independent second person must sign.',
    )
  if (signed(cr, actor.id, 'implemented'))
    return forbid('Nobody approves a change they implemented: an independent approver must sign.')
  const reviewed = reviewedBy(cr, actor.id)
  if (reviewed)
    return forbid(
      `Nobody approves a change they reviewed (${reviewed} review): ` +
        'the approval is an independent check on top of the reviews.',
    )
  if (!can(actor, 'approve', cr)) return forbid('You may not approve this change.')
  return allow
}

function approveVerdict(cr: ChangeRuleRecord, actor: ChangeActor): Verdict {
  const who = approverChecks(cr, actor)
  if (!who.allowed) return who
  if (cr.status !== 'submitted' && !emergencyAfterTheFact(cr))
    return blocked(`This change request is ${cr.status}; it cannot be approved now.`)
  if (signed(cr, actor.id, 'approved'))
    return blocked('You have approved this request already; it waits for another approver.')
  const waiting = missingReviews(cr)
  if (waiting.length)
    return blocked(
      `Reviewers sign before the approver: ` +
        `the ${listOf(waiting)} review${waiting.length > 1 ? 's are' : ' is'} not signed yet.`,
    )
  return allow
}

function rejectVerdict(cr: ChangeRuleRecord, actor: ChangeActor): Verdict {
  const who = approverChecks(cr, actor)
  if (!who.allowed) return who
  if (cr.status !== 'submitted') return blocked(`This change request is ${cr.status}; it cannot be rejected now.`)
  return allow
}

function implementVerdict(cr: ChangeRuleRecord, actor: ChangeActor, now: Date): Verdict {
  if (!can(actor, 'implement', cr)) {
    if (emergencyFirst(cr))
      return forbid('An emergency change is implemented before approval only by a shift supervisor of the site.')
    return forbid('Only a technician or control engineer of this site implements this change.')
  }
  if (signed(cr, actor.id, 'approved'))
    return forbid('Nobody implements a change they approved: another qualified person sets it on the device.')
  if (cr.status !== 'approved' && !emergencyFirst(cr))
    return blocked(`This change request is ${cr.status}; only an approved request is implemented.`)
  if (cr.status === 'approved' && cr.approvalExpiresAt && now.getTime() > Date.parse(cr.approvalExpiresAt))
    return blocked('The approval has expired (not implemented within the policy time); it must be approved again.')
  if (cr.type === 'temporary' && cr.expiresAt && now.getTime() >= Date.parse(cr.expiresAt))
    return blocked('This temporary change has passed its end; it is not put on the device any more.')
  const open = openChecks(cr, 'before')
  if (open.length)
    return blocked(
      `Complete the before-implementation checklist first (or mark items not applicable): ${open.join('; ')}.`,
    )
  if (cr.items.every((i) => i.implementedAt)) return blocked('Every item is implemented already.')
  return allow
}

function closeVerdict(cr: ChangeRuleRecord, actor: ChangeActor): Verdict {
  if (!can(actor, 'close', cr)) return forbid('Only a safety engineer of this site closes a change request.')
  if (cr.status !== 'implemented')
    return blocked(`Only an implemented change request is closed; this one is ${cr.status}.`)
  if (!cr.approvedAt) return blocked('The emergency change is not approved yet; it cannot be closed.')
  const open = openChecks(cr, 'closeout')
  if (open.length) return invalid(`Complete the close-out checklist first: ${open.join('; ')}.`)
  return allow
}

/**
 * Where a temporary change stands (docs/change-requests.md#expired-temporary-changes), derived from its state, its
 * end and its reversals rather than stored, so it is true at every moment without a job keeping it up to date:
 * `open` while in force (or approved) before its end; `expired` ("expired, to be reverted") when it is on the device
 * past its end and no reversal is implemented; `reverted` once a reversal is implemented. Null for anything else.
 */
export type TemporaryState = 'open' | 'expired' | 'reverted'
export function temporaryState(
  cr: Pick<ChangeRuleRecord, 'type' | 'status' | 'expiresAt' | 'reversals'>,
  now: Date,
): TemporaryState | null {
  if (cr.type !== 'temporary' || !['approved', 'implemented', 'closed'].includes(cr.status)) return null
  if (cr.reversals.some((r) => r.status === 'implemented' || r.status === 'closed')) return 'reverted'
  const past = cr.expiresAt !== null && now.getTime() >= Date.parse(cr.expiresAt)
  if (!past) return 'open'
  // approved but never put on the device: nothing to revert, and it may no longer be implemented
  return cr.status === 'approved' ? null : 'expired'
}

function proposeReversalVerdict(cr: ChangeRuleRecord, actor: ChangeActor, now: Date): Verdict {
  if (!actor.ability.can('create', siteOnly(cr)))
    return forbid('Only a safety engineer of this site proposes the reversal of a temporary change.')
  if (cr.type !== 'temporary') return blocked('Only a temporary change is reversed by a linked request.')
  const state = temporaryState(cr, now)
  if (state === 'reverted') return blocked('This temporary change is reverted already.')
  if (cr.status !== 'implemented' && cr.status !== 'closed')
    return blocked('Only a temporary change on the device (implemented) is reversed.')
  const open = cr.reversals.find((r) => ['draft', 'submitted', 'approved'].includes(r.status))
  if (open) return blocked(`Reversal #${open.id} is under way already; take that one forward.`)
  return allow
}

const listOf = (words: string[]) =>
  words.length <= 1 ? words.join('') : `${words.slice(0, -1).join(', ')} and ${words[words.length - 1]}`

/** The discipline whose review this person signed on the request (open signatures), if any. */
function reviewedBy(cr: ChangeRuleRecord, userId: number): Discipline | undefined {
  return DISCIPLINES.find((d) => signed(cr, userId, reviewMeaning(d)))
}
/** The open signature of a discipline's review, if signed. */
export function reviewOf<S extends { meaning: string; voided: boolean }>(
  cr: { signatures: S[] },
  d: Discipline,
): S | undefined {
  return cr.signatures.find((s) => !s.voided && s.meaning === reviewMeaning(d))
}
/** The required discipline reviews not signed yet. */
export function missingReviews(cr: Pick<ChangeRuleRecord, 'signatures' | 'reviewsRequired'>): Discipline[] {
  return (cr.reviewsRequired ?? []).filter((d) => !reviewOf(cr, d))
}

const reviewerRoles = (d: Discipline) =>
  listOf(DISCIPLINE_REVIEWERS[d].map((r) => ROLE_LABELS[r].toLowerCase())).replace(/ and /, ' or ')

/**
 * Whether the actor may sign the discipline review `d` (docs/change-requests.md#discipline-reviews): a reviewer of
 * that discipline at the site, never the proposer, an editor or an approver of the request, one discipline per person;
 * only a review the request needs, before approval, once.
 */
export function reviewVerdict(cr: ChangeRuleRecord, d: Discipline, actor: ChangeActor): Verdict {
  if (!actor.ability.can('review', subject('ChangeRequest', { siteId: cr.siteId, discipline: d }) as never))
    return forbid(`Only a ${reviewerRoles(d)} of this site signs the ${d} review.`)
  if (cr.proposerId === actor.id) return forbid('Nobody reviews a change they proposed: the review is independent.')
  if (cr.editorIds.includes(actor.id)) return forbid('Nobody reviews a change they edited: the review is independent.')
  if (signed(cr, actor.id, 'approved'))
    return forbid('Nobody reviews a change they approved: reviewers and approvers are different people.')
  const other = reviewedBy(cr, actor.id)
  if (other && other !== d)
    return forbid(`You signed the ${other} review of this request; another person signs the ${d} review.`)
  if (!(cr.reviewsRequired ?? []).includes(d)) return blocked(`This change request needs no ${d} review.`)
  if (cr.status !== 'submitted' && !emergencyAfterTheFact(cr))
    return blocked(`This change request is ${cr.status}; it is reviewed only while it waits for approval.`)
  const done = reviewOf(cr, d)
  if (done) return blocked(`The ${d} review is signed already.`)
  return allow
}

/** The discipline reviews of a request for this actor. */
export function changeReviewRules(cr: ChangeRuleRecord, actor: ChangeActor): Verdicts<Discipline> {
  return Object.fromEntries(DISCIPLINES.map((d) => [d, reviewVerdict(cr, d, actor)])) as Verdicts<Discipline>
}

/** Every action of the change-request workflow for this actor, now. */
export function changeRequestRules(cr: ChangeRuleRecord, actor: ChangeActor, now: Date): Verdicts<ChangeAction> {
  const implement = implementVerdict(cr, actor, now)
  const remaining = cr.items.filter((i) => !i.implementedAt)
  return {
    edit: mayEdit(cr, actor, 'edit'),
    withdraw: mayEdit(cr, actor, 'withdraw'),
    submit: !can(actor, 'submit', cr)
      ? forbid('Only a safety engineer of this site submits change requests.')
      : cr.status !== 'draft'
        ? blocked(`Only a draft can be submitted; this request is ${cr.status}.`)
        : cr.items.length === 0
          ? invalid('Add at least one item.')
          : allow,
    attach: !can(actor, 'update', cr)
      ? forbid('Only a safety engineer of this site attaches files to this change request.')
      : (cr.status !== 'draft' && cr.status !== 'submitted') || cr.signatures.some((s) => !s.voided)
        ? blocked('Attach files before anyone signs the request: what is signed must not change afterwards.')
        : allow,
    tick: !can(actor, 'update', cr)
      ? forbid('Only a safety engineer of this site keeps the checklist.')
      : ['closed', 'withdrawn', 'rejected'].includes(cr.status)
        ? blocked(`A ${cr.status} change request cannot be edited.`)
        : allow,
    approve: approveVerdict(cr, actor),
    reject: rejectVerdict(cr, actor),
    implement,
    implementAll: !implement.allowed
      ? implement
      : remaining.some((i) => i.kind !== 'create')
        ? blocked(
            'Only a baseline of new limits is implemented in bulk; ' +
              'implement changes item by item with their read-back.',
          )
        : remaining.some((i) => i.stale)
          ? blocked('A limit changed since the request was written; the request must be revised.')
          : allow,
    close: closeVerdict(cr, actor),
    proposeReversal: proposeReversalVerdict(cr, actor, now),
  }
}

/**
 * The discipline reviews as the request page offers them: a review's button is shown to the reviewers of that
 * discipline at the site while the request waits for approval and the review is not signed; its verdict says whether
 * this person may sign it.
 */
export function changeReviewOffers(cr: ChangeRuleRecord, actor: ChangeActor): Record<Discipline, ChangeOffer> {
  const waiting = cr.status === 'submitted' || emergencyAfterTheFact(cr)
  const offer = (d: Discipline): ChangeOffer => ({
    offered:
      waiting &&
      !reviewOf(cr, d) &&
      actor.ability.can('review', subject('ChangeRequest', { siteId: cr.siteId, discipline: d }) as never),
    verdict: reviewVerdict(cr, d, actor),
  })
  return Object.fromEntries(DISCIPLINES.map((d) => [d, offer(d)])) as Record<Discipline, ChangeOffer>
}

/** An action as a screen offers it: shown or not, and its verdict (enabled, or disabled with the reason). */
export interface ChangeOffer {
  offered: boolean
  verdict: Verdict
}

/** The request-level actions of the request page (the items' own buttons read `implementItemVerdict`). */
export type ChangeOffered =
  'edit' | 'submit' | 'withdraw' | 'approve' | 'reject' | 'implement' | 'implementAll' | 'close'

/**
 * What the request page offers (docs/change-requests.md#the-rule-book): an action is offered (its button shown) where
 * it applies to the request's state and the person holds the role for that step at the site; it is enabled when the
 * rule book allows it, otherwise disabled with the verdict's reason. "Implement all" is offered for a baseline of new
 * limits only (more than one left, every one a `create`).
 */
export function changeRequestOffers(
  cr: ChangeRuleRecord,
  actor: ChangeActor,
  now: Date,
): Record<ChangeOffered, ChangeOffer> & { verdicts: Verdicts<ChangeAction> } {
  const v = changeRequestRules(cr, actor, now)
  const open = cr.status === 'draft' || cr.status === 'submitted'
  const engineer = can(actor, 'update', cr)
  const approver = actor.ability.can('approve', siteOnly(cr))
  const implementer = (cr.status === 'approved' || emergencyFirst(cr)) && can(actor, 'implement', cr)
  const remaining = cr.items.filter((i) => !i.implementedAt)
  return {
    verdicts: v,
    edit: { offered: open && engineer, verdict: v.edit },
    withdraw: { offered: open && engineer, verdict: v.withdraw },
    submit: { offered: cr.status === 'draft' && can(actor, 'submit', cr), verdict: v.submit },
    approve: { offered: approver && (cr.status === 'submitted' || emergencyAfterTheFact(cr)), verdict: v.approve },
    reject: { offered: approver && cr.status === 'submitted', verdict: v.reject },
    implement: { offered: implementer, verdict: v.implement },
    implementAll: {
      offered: implementer && remaining.length > 1 && remaining.every((i) => i.kind === 'create'),
      verdict: v.implementAll,
    },
    close: { offered: cr.status === 'implemented' && can(actor, 'close', cr), verdict: v.close },
  }
}

/** Whether one item may be implemented now (the request's answer, then the item's own state). */
export function implementItemVerdict(
  cr: ChangeRuleRecord,
  item: ChangeRuleRecord['items'][number],
  actor: ChangeActor,
  now: Date,
): Verdict {
  if (item.implementedAt) return blocked('This item is implemented already.')
  const v = implementVerdict(cr, actor, now)
  if (!v.allowed) return v
  if (item.stale)
    return blocked('The limit or instrument changed since the request was written; the request must be revised.')
  return allow
}

// ---- who a request waits for

/** The sites where change requests wait for a person, by what the person would do there. */
export interface ChangeWaitingSites {
  /** submitted requests (and emergency changes implemented unapproved) wait for the approver */
  approve: number[]
  /** approved requests wait for the technician or control engineer who implements them */
  implement: number[]
  /** submitted emergency changes wait for the shift supervisor, who implements them first */
  emergency: number[]
  /** implemented, approved requests wait for the safety engineer's close-out */
  close: number[]
}

/**
 * Where change requests wait for this person ("waiting for me", docs/api.md#change-requests), from the roles they
 * hold at each site: approvers approve, technicians and control engineers implement, shift supervisors implement a
 * submitted emergency change first, safety engineers close out.
 */
export function changeWaitingSites(roles: readonly { role: Role; siteId: number }[]): ChangeWaitingSites {
  const sites = (...held: Role[]) => roles.filter((r) => held.includes(r.role)).map((r) => r.siteId)
  return {
    approve: sites('approver'),
    implement: sites('technician', 'control_engineer'),
    emergency: sites('shift_supervisor'),
    close: sites('safety_engineer'),
  }
}

/**
 * The tab the change list opens on: "waiting for me" for those who approve, implement or implement an emergency
 * change first; "mine" for safety engineers, who write and close their own requests; else "all".
 */
export function defaultChangeView(roles: readonly { role: Role; siteId: number }[]): ChangeView {
  const w = changeWaitingSites(roles)
  if (w.approve.length || w.implement.length || w.emergency.length) return 'waiting'
  return w.close.length ? 'mine' : 'all'
}

import { describe, expect, it } from 'vitest'
import { createAppAbility, defineRulesFor } from '../../../../shared/abilities/index.ts'
import {
  type ChangeRuleRecord,
  changeRequestRules,
  changeReviewRules,
  missingReviews,
} from '../../../../shared/domain/rules/change-requests.ts'
import { DISCIPLINES, type Discipline, IMPACT_CHECKLIST } from '../../../../shared/schemas/change-requests.ts'
import type { Role } from '../../../../shared/schemas/users.ts'

// Discipline reviews of a change request (docs/change-requests.md#discipline-reviews), against the tables written by
// hand below. Who reviews which discipline (operations: shift supervisor; process: safety engineer; instrumentation:
// control engineer or technician), that reviewers sign before the approver, and that reviewers are independent of
// the proposer, the editors and the approvers, are common practice, not clauses of a standard; OSHA 1910.119(l) asks
// that the technical basis and the impact on safety and health be considered before the change (from memory).
const NOW = new Date('2026-06-01T10:00:00Z')
const SITE = 1

const PEOPLE: Record<string, { id: number; roles: Role[] }> = {
  engineer: { id: 1, roles: ['safety_engineer'] },
  engineer2: { id: 9, roles: ['safety_engineer'] },
  approver: { id: 2, roles: ['approver'] },
  technician: { id: 3, roles: ['technician'] },
  supervisor: { id: 4, roles: ['shift_supervisor'] },
  operator: { id: 5, roles: ['operator'] },
  control: { id: 6, roles: ['control_engineer'] },
  auditor: { id: 7, roles: ['auditor'] },
  manager: { id: 8, roles: ['plant_manager'] },
  approverSupervisor: { id: 10, roles: ['approver', 'shift_supervisor'] },
  supervisorTech: { id: 11, roles: ['shift_supervisor', 'technician'] },
  editor: { id: 12, roles: ['safety_engineer'] },
  elsewhere: { id: 13, roles: [] },
}
type Who = keyof typeof PEOPLE
const actor = (who: Who) => {
  const p = PEOPLE[who]
  const roles = p.roles.map((role) => ({ siteId: SITE, role }))
  if (who === 'elsewhere')
    roles.push(
      { siteId: 2, role: 'safety_engineer' },
      { siteId: 2, role: 'shift_supervisor' },
      { siteId: 2, role: 'technician' },
    )
  return { id: p.id, ability: createAppAbility(defineRulesFor({ id: p.id, roles })) }
}
const sig = (userId: number, meaning: string, voided = false) => ({ userId, meaning, voided })

function record(over: Partial<ChangeRuleRecord>): ChangeRuleRecord {
  return {
    siteId: SITE,
    type: 'permanent',
    status: 'submitted',
    proposerId: 1,
    editorIds: [1, 12],
    approvedAt: null,
    approvalExpiresAt: null,
    expiresAt: null,
    reversals: [],
    items: [{ id: 11, kind: 'modify', implementedAt: null, stale: false }],
    signatures: [],
    checklist: IMPACT_CHECKLIST.map((c) => ({ item: c.item, label: c.label, group: c.group, doneAt: null })),
    reviewsRequired: ['operations', 'process', 'instrumentation'],
    ...over,
  }
}
const allowedReviews = (cr: ChangeRuleRecord, who: Who) => {
  const rules = changeReviewRules(cr, actor(who))
  return DISCIPLINES.filter((d) => rules[d].allowed)
}

describe('discipline reviews: who signs which', () => {
  // a submitted request that needs all three reviews, none signed yet; proposer engineer, editor "editor"
  const TABLE: [Who, Discipline[]][] = [
    ['supervisor', ['operations']],
    ['engineer2', ['process']],
    ['technician', ['instrumentation']],
    ['control', ['instrumentation']],
    ['supervisorTech', ['operations', 'instrumentation']],
    ['approverSupervisor', ['operations']],
    ['engineer', []], // the proposer
    ['editor', []], // edited the request
    ['approver', []],
    ['operator', []],
    ['auditor', []],
    ['manager', []],
    ['elsewhere', []], // the roles, at another site
  ]
  it.each(TABLE)('%s may sign %j', (who, expected) => {
    expect(allowedReviews(record({}), who)).toEqual(expected)
  })

  it('answers 403 with the reason for role, proposer, editor, approver and a second discipline', () => {
    const rules = (who: Who, over: Partial<ChangeRuleRecord> = {}) => changeReviewRules(record(over), actor(who))
    expect(rules('operator').operations).toMatchObject({ status: 403, reason: expect.stringContaining('shift') })
    expect(rules('approver').instrumentation).toMatchObject({
      status: 403,
      reason: expect.stringContaining('control engineer or maintenance technician'),
    })
    expect(rules('engineer').process).toMatchObject({ status: 403, reason: expect.stringContaining('proposed') })
    expect(rules('editor').process).toMatchObject({ status: 403, reason: expect.stringContaining('edited') })
    // an approver who approved already (a SIL change needing two approvals) does not review it as well
    const approved = { signatures: [sig(10, 'approved')] }
    expect(rules('approverSupervisor', approved).operations).toMatchObject({
      status: 403,
      reason: expect.stringContaining('approved'),
    })
    // one person signs one discipline review of a request
    const reviewed = { signatures: [sig(11, 'reviewed_operations')] }
    expect(rules('supervisorTech', reviewed).instrumentation).toMatchObject({
      status: 403,
      reason: expect.stringContaining('operations review'),
    })
  })

  it('answers 409 for a review not needed, signed already, or out of its state', () => {
    const rules = (over: Partial<ChangeRuleRecord>) => changeReviewRules(record(over), actor('supervisor'))
    expect(rules({ reviewsRequired: ['process'] }).operations).toMatchObject({ status: 409 })
    expect(rules({ reviewsRequired: undefined }).operations).toMatchObject({ status: 409 })
    expect(rules({ signatures: [sig(10, 'reviewed_operations')] }).operations).toMatchObject({
      status: 409,
      reason: expect.stringContaining('signed already'),
    })
    // a voided review (the request was edited) is signed again
    expect(rules({ signatures: [sig(10, 'reviewed_operations', true)] }).operations.allowed).toBe(true)
    for (const status of ['draft', 'approved', 'implemented', 'closed', 'rejected', 'withdrawn'] as const)
      expect(rules({ status }).operations, status).toMatchObject({ status: 409 })
    // an emergency change implemented before approval is reviewed before its approval after the fact
    expect(rules({ type: 'emergency', status: 'implemented', approvedAt: null }).operations.allowed).toBe(true)
    expect(
      rules({ type: 'emergency', status: 'implemented', approvedAt: '2026-05-31T10:00:00Z' }).operations,
    ).toMatchObject({ status: 409 })
  })
})

describe('discipline reviews: before the approver', () => {
  const approve = (over: Partial<ChangeRuleRecord>, who: Who = 'approver') =>
    changeRequestRules(record(over), actor(who), NOW).approve

  it('refuses approval with the missing reviews named until every required review is signed', () => {
    expect(approve({})).toMatchObject({
      status: 409,
      reason: expect.stringContaining('operations, process and instrumentation reviews are not signed yet'),
    })
    const two = [sig(4, 'reviewed_operations'), sig(9, 'reviewed_process')]
    expect(approve({ signatures: two })).toMatchObject({
      status: 409,
      reason: expect.stringContaining('the instrumentation review is not signed yet'),
    })
    // a voided review does not count
    expect(approve({ signatures: [...two, sig(3, 'reviewed_instrumentation', true)] }).allowed).toBe(false)
    expect(approve({ signatures: [...two, sig(3, 'reviewed_instrumentation')] }).allowed).toBe(true)
    expect(missingReviews(record({ signatures: two }))).toEqual(['instrumentation'])
  })

  it('approves as before when the site asks for no review', () => {
    expect(approve({ reviewsRequired: [] }).allowed).toBe(true)
    expect(approve({ reviewsRequired: undefined }).allowed).toBe(true)
  })

  it('keeps a reviewer from approving the same request (403, whatever the state of the reviews)', () => {
    const signatures = [sig(10, 'reviewed_operations'), sig(9, 'reviewed_process'), sig(3, 'reviewed_instrumentation')]
    expect(approve({ signatures }, 'approverSupervisor')).toMatchObject({
      status: 403,
      reason: expect.stringContaining('reviewed'),
    })
    expect(approve({ signatures, reviewsRequired: [] }, 'approverSupervisor')).toMatchObject({ status: 403 })
    // the other approver may
    expect(approve({ signatures }).allowed).toBe(true)
    // rejecting is not held up by the reviews: an approver may stop a change at any time while it is submitted
    expect(changeRequestRules(record({}), actor('approver'), NOW).reject.allowed).toBe(true)
  })
})

import { describe, expect, it } from 'vitest'
import {
  type ChangeRuleRecord,
  changeRequestRules,
  changeReviewRules,
  missingReviews,
} from '../../../../shared/domain/rules/change-requests.ts'
import { DISCIPLINES, type Discipline } from '../../../../shared/schemas/change-requests.ts'
import type { Role } from '../../../../shared/schemas/users.ts'
import { actorsOf, changeRecord, COMMON_PEOPLE, NOW, sig } from './change-request-fixtures.ts'

// Discipline reviews of a change request (docs/change-requests.md#discipline-reviews), against the tables written by
// hand below. Who reviews which discipline (operations: shift supervisor; process: safety engineer; instrumentation:
// control engineer or technician), that reviewers sign before the approver, and that reviewers are independent of
// the proposer, the editors and the approvers, are common practice, not clauses of a standard; OSHA 1910.119(l) asks
// that the technical basis and the impact on safety and health be considered before the change (from memory).
const PEOPLE: Record<string, { id: number; roles: Role[] }> = {
  ...COMMON_PEOPLE,
  manager: { id: 8, roles: ['plant_manager'] },
  approverSupervisor: { id: 10, roles: ['approver', 'shift_supervisor'] },
  supervisorTech: { id: 11, roles: ['shift_supervisor', 'technician'] },
  editor: { id: 12, roles: ['safety_engineer'] },
  elsewhere: { id: 13, roles: [] },
}
type Who = keyof typeof PEOPLE
const actor = actorsOf(PEOPLE, ['safety_engineer', 'shift_supervisor', 'technician'])

/** A submitted request needing all three reviews, edited by its proposer and by "editor". */
const record = (over: Partial<ChangeRuleRecord>) =>
  changeRecord({
    status: 'submitted',
    editorIds: [1, 12],
    reviewsRequired: ['operations', 'process', 'instrumentation'],
    ...over,
  })
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

import { describe, expect, it } from 'vitest'
import { createAppAbility, defineRulesFor } from '../../../../shared/abilities/index.ts'
import {
  PROPOSAL_ACTIONS,
  type ProposalAction,
  changeProposalRules,
  raiseProposalVerdict,
} from '../../../../shared/domain/rules/change-proposals.ts'
import type { ProposalStatus } from '../../../../shared/schemas/change-proposals.ts'
import type { Role } from '../../../../shared/schemas/users.ts'

// The rule book of change proposals (docs/change-requests.md#change-proposals), state × role, against the table
// written by hand below. Who raises and who develops a change is common practice (OSHA 1910.119(l) asks for
// procedures to manage change, from memory).
const SITE = 1
const actor = (roles: Role[], siteId = SITE) => ({
  id: 5,
  ability: createAppAbility(defineRulesFor({ id: 5, roles: roles.map((role) => ({ siteId, role })) })),
})

describe('change-proposal rule book', () => {
  it.each([
    [['operator'], true],
    [['technician'], true],
    [['control_engineer'], true],
    [['shift_supervisor'], true],
    [['safety_engineer'], false],
    [['approver'], false],
    [['plant_manager'], false],
    [['auditor'], false],
    [['admin'], false],
  ] as [Role[], boolean][])('%j may raise a proposal: %s', (roles, allowed) => {
    expect(raiseProposalVerdict(SITE, actor(roles)).allowed).toBe(allowed)
    // never at a site where the role is not held
    expect(raiseProposalVerdict(SITE, actor(roles, 2)).allowed).toBe(false)
  })

  const TABLE: [ProposalStatus, Role[], ProposalAction[]][] = [
    ['open', ['safety_engineer'], ['takeUp', 'decline']],
    ['open', ['operator'], []],
    ['open', ['approver'], []],
    ['open', ['shift_supervisor'], []],
    ['taken_up', ['safety_engineer'], []],
    ['declined', ['safety_engineer'], []],
  ]
  it.each(TABLE)('%s, %j may %j', (status, roles, allowed) => {
    const rules = changeProposalRules({ siteId: SITE, status }, actor(roles))
    expect(PROPOSAL_ACTIONS.filter((a) => rules[a].allowed)).toEqual(allowed)
  })

  it('answers 403 for the role, 409 for a decided proposal, with a reason', () => {
    expect(changeProposalRules({ siteId: SITE, status: 'open' }, actor(['operator'])).takeUp).toMatchObject({
      status: 403,
      reason: expect.stringContaining('safety engineer'),
    })
    expect(changeProposalRules({ siteId: SITE, status: 'open' }, actor(['safety_engineer'], 2)).decline).toMatchObject({
      status: 403,
    })
    expect(changeProposalRules({ siteId: SITE, status: 'declined' }, actor(['safety_engineer'])).takeUp).toMatchObject({
      status: 409,
      reason: expect.stringContaining('declined'),
    })
  })
})

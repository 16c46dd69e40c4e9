import { describe, expect, it } from 'vitest'
import { createAppAbility, defineRulesFor } from '../../../../shared/abilities/index.ts'
import type { LimitStatus } from '../../../../shared/domain/operating-window.ts'
import {
  LIMIT_ACTIONS,
  type LimitAction,
  draftVerdict,
  instrumentEditVerdict,
  limitOffers,
  limitRules,
  tripTestableVerdict,
} from '../../../../shared/domain/rules/limits.ts'
import type { Role } from '../../../../shared/schemas/users.ts'

// The register's rule book (docs/register.md#the-rule-book), state × role, against the table written by hand below.
// A draft is edited freely; a limit in service changes only through management of change (OSHA 1910.119(l), from
// memory); who holds which right is the product's own role table (shared/abilities/index.ts), not a standard.
const SITE = 1
const actor = (roles: Role[], siteId = SITE) => ({
  ability: createAppAbility(defineRulesFor({ id: 5, roles: roles.map((role) => ({ siteId, role })) })),
})
const limit = (status: LimitStatus) => ({ siteId: SITE, tag: 'TSHH-101', status })

const PROPOSERS: Role[] = ['operator', 'technician', 'control_engineer', 'shift_supervisor']
const NOBODY: Role[] = ['approver', 'plant_manager', 'auditor', 'admin']

// [status, roles, the actions allowed]
const TABLE: [LimitStatus, Role[], LimitAction[]][] = [
  ['proposed', ['safety_engineer'], ['edit', 'delete', 'proposeCommissioning', 'setDemandAssumptions']],
  ['proposed', ['operator'], ['raiseProposal']],
  ['proposed', ['technician'], ['raiseProposal']],
  ['proposed', ['control_engineer'], ['raiseProposal']],
  ['proposed', ['shift_supervisor'], ['raiseProposal']],
  ...NOBODY.map((r): [LimitStatus, Role[], LimitAction[]] => ['proposed', [r], []]),
  ['active', ['safety_engineer'], ['proposeChange', 'setDemandAssumptions']],
  ['active', ['operator'], ['raiseProposal']],
  ['active', ['technician'], ['raiseProposal', 'recordTripTest']],
  ['active', ['control_engineer'], ['raiseProposal']],
  ['active', ['shift_supervisor'], ['raiseProposal']],
  [
    'active',
    ['safety_engineer', 'technician'],
    ['proposeChange', 'raiseProposal', 'recordTripTest', 'setDemandAssumptions'],
  ],
  ...NOBODY.map((r): [LimitStatus, Role[], LimitAction[]] => ['active', [r], []]),
  ['retired', ['safety_engineer'], []],
  ...PROPOSERS.map((r): [LimitStatus, Role[], LimitAction[]] => ['retired', [r], []]),
]

describe('register rule book', () => {
  it.each(TABLE)('%s limit, %j may %j', (status, roles, allowed) => {
    const rules = limitRules(limit(status), actor(roles))
    expect(LIMIT_ACTIONS.filter((a) => rules[a].allowed)).toEqual(allowed)
    // never at a site where the role is not held: every action answers 403 there
    const elsewhere = limitRules(limit(status), actor(roles, 2))
    for (const a of LIMIT_ACTIONS) expect(elsewhere[a], a).toMatchObject({ allowed: false, status: 403 })
  })

  it('answers 403 for the role before the state, 409 for the state, with a sentence', () => {
    expect(limitRules(limit('active'), actor(['operator'])).edit).toMatchObject({
      status: 403,
      reason: expect.stringContaining('safety engineer'),
    })
    expect(limitRules(limit('active'), actor(['safety_engineer'])).edit).toEqual({
      allowed: false,
      status: 409,
      reason: 'Limit TSHH-101 is active: it changes only through a change request',
    })
    expect(limitRules(limit('retired'), actor(['safety_engineer'])).edit).toMatchObject({
      status: 409,
      reason: expect.stringContaining('retired'),
    })
    expect(limitRules(limit('active'), actor(['safety_engineer'])).delete).toEqual({
      allowed: false,
      status: 409,
      reason: 'Only draft (proposed) limits can be deleted; retire an active limit through a change request',
    })
    expect(limitRules(limit('proposed'), actor(['technician'])).recordTripTest).toEqual({
      allowed: false,
      status: 409,
      reason: 'Limit TSHH-101 is proposed; only an active limit is trip-tested',
    })
    expect(limitRules(limit('active'), actor(['operator'])).recordTripTest).toMatchObject({
      status: 403,
      reason: expect.stringContaining('technician'),
    })
    expect(limitRules(limit('retired'), actor(['operator'])).raiseProposal).toMatchObject({
      status: 409,
      reason: expect.stringContaining('retired'),
    })
    expect(limitRules(limit('proposed'), actor(['safety_engineer'])).proposeChange).toMatchObject({
      status: 409,
      reason: expect.stringContaining('draft'),
    })
  })

  // [status, roles, the verdict on setting the hazard-study rates]: the role first (403), then the state (409)
  const ASSUMPTIONS: [LimitStatus, Role[], { allowed: boolean; status?: number }][] = [
    ['proposed', ['safety_engineer'], { allowed: true }],
    ['active', ['safety_engineer'], { allowed: true }],
    ['retired', ['safety_engineer'], { allowed: false, status: 409 }],
    ['active', ['technician'], { allowed: false, status: 403 }],
    ['active', ['shift_supervisor'], { allowed: false, status: 403 }],
    ['retired', ['operator'], { allowed: false, status: 403 }],
    ['proposed', ['approver'], { allowed: false, status: 403 }],
  ]
  it.each(ASSUMPTIONS)("a %s limit's hazard-study rates, set by %j: %j", (status, roles, verdict) => {
    expect(limitRules(limit(status), actor(roles)).setDemandAssumptions).toMatchObject(verdict)
  })

  it('keeps the hazard-study rates of a retired limit as they stood, with a sentence', () => {
    expect(limitRules(limit('retired'), actor(['safety_engineer'])).setDemandAssumptions).toEqual({
      allowed: false,
      status: 409,
      reason: 'Limit TSHH-101 is retired; its hazard-study rates are kept for the record as they stood.',
    })
    expect(limitRules(limit('active'), actor(['operator'])).setDemandAssumptions).toMatchObject({
      status: 403,
      reason: expect.stringContaining('safety engineer'),
    })
  })

  it('edits only a draft, by hand or by an import', () => {
    expect(draftVerdict(limit('proposed')).allowed).toBe(true)
    expect(draftVerdict(limit('active'))).toEqual({
      allowed: false,
      status: 409,
      reason: 'Limit TSHH-101 is active: it changes only through a change request',
    })
    expect(draftVerdict(limit('retired'))).toMatchObject({ allowed: false, status: 409 })
  })

  it('trip-tests an active limit only, whoever asks', () => {
    expect(tripTestableVerdict(limit('active')).allowed).toBe(true)
    expect(tripTestableVerdict(limit('proposed'))).toMatchObject({ allowed: false, status: 409 })
    expect(tripTestableVerdict(limit('retired'))).toMatchObject({ allowed: false, status: 409 })
  })

  // [status, roles, the actions the limit page offers (shown, each enabled)]
  const OFFERS: [LimitStatus, Role[], LimitAction[]][] = [
    ['proposed', ['safety_engineer'], ['edit', 'delete', 'proposeCommissioning', 'setDemandAssumptions']],
    ['proposed', ['technician'], ['raiseProposal']],
    ['proposed', ['approver'], []],
    ['active', ['safety_engineer'], ['proposeChange', 'setDemandAssumptions']],
    ['active', ['technician'], ['raiseProposal', 'recordTripTest']],
    ['active', ['operator'], ['raiseProposal']],
    ['active', ['auditor'], []],
    ['retired', ['safety_engineer'], []],
    ['retired', ['technician'], []],
  ]
  it.each(OFFERS)('the page of a %s limit offers %j: %j', (status, roles, offered) => {
    const offers = limitOffers(limit(status), actor(roles))
    expect(LIMIT_ACTIONS.filter((a) => offers[a].offered)).toEqual(offered)
    for (const a of offered) expect(offers[a].verdict.allowed, a).toBe(true)
  })

  it('edits an instrument only while no active limit stands on it, as a safety engineer of its site', () => {
    const tt = { siteId: SITE, tag: 'TT-101' }
    expect(instrumentEditVerdict(tt, [], actor(['safety_engineer'])).allowed).toBe(true)
    expect(instrumentEditVerdict(tt, ['TSHH-101', 'TAH-101'], actor(['safety_engineer']))).toEqual({
      allowed: false,
      status: 409,
      reason: 'Instrument TT-101 feeds active limits (TSHH-101, TAH-101): change it through a change request',
    })
    expect(instrumentEditVerdict(tt, [], actor(['technician']))).toMatchObject({ allowed: false, status: 403 })
    expect(instrumentEditVerdict(tt, [], actor(['safety_engineer'], 2))).toMatchObject({ allowed: false, status: 403 })
  })
})

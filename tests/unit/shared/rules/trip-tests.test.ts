import { describe, expect, it } from 'vitest'
import { createAppAbility, defineRulesFor } from '../../../../shared/abilities/index.ts'
import {
  checkDeferralRequest,
  checkRepairDeadline,
  deferralActions,
  deadlineApprovalStanding,
  deferralApproverRole,
  degradationActions,
  functionMttrHours,
  graceDaysFor,
  isComplete,
  isTestDueSoon,
  isTestOverdue,
  maxDeferralDays,
  type RuleActor,
  type TripTestAction,
  tripTestActions,
} from '../../../../shared/domain/rules/trip-tests.ts'
import { DEFAULT_SITE_POLICY } from '../../../../shared/schemas/sites.ts'
import type { Role } from '../../../../shared/schemas/users.ts'

// The trip-test rule book, state × role × policy. Who signs what: docs/trip-tests.md#who-signs (roles from the
// product's role table; separation of performer and acceptor is common practice, no standard behind it).

const SITE = 1
const NOW = new Date('2026-03-01T10:00:00Z')
function actor(id: number, ...roles: Role[]): RuleActor {
  return {
    id,
    roles,
    ability: createAppAbility(defineRulesFor({ id, roles: roles.map((role) => ({ siteId: SITE, role })) })),
  }
}
// people: 1 recorded the test
const tech = actor(1, 'technician')
const tech2 = actor(2, 'technician')
const sup = actor(3, 'shift_supervisor')
const operator = actor(4, 'operator')
const eng = actor(5, 'safety_engineer')
const manager = actor(6, 'plant_manager')
const techAndSup = actor(1, 'technician', 'shift_supervisor')
const otherSite: RuleActor = {
  id: 7,
  roles: [],
  ability: createAppAbility(defineRulesFor({ id: 7, roles: [{ siteId: 2, role: 'technician' }] })),
}

const sig = (meaning: string, userId: number) => ({ meaning, userId })
const STATES = {
  recorded: { status: 'recorded' as const, signatures: [] },
  performed: { status: 'signed' as const, signatures: [sig('performed', 1)] },
  returned: { status: 'signed' as const, signatures: [sig('performed', 1), sig('returned_to_service', 1)] },
  accepted: {
    status: 'completed' as const,
    signatures: [sig('performed', 1), sig('returned_to_service', 1), sig('accepted', 3)],
  },
}
type State = keyof typeof STATES

// expected answer: true allowed, 403 / 409 refused with that status
const TABLE: [State, string, RuleActor, Partial<Record<TripTestAction, true | 403 | 409>>][] = [
  [
    'recorded',
    'recorder',
    tech,
    { edit: true, attach: true, signPerformed: true, signWitnessed: 403, signAccepted: 403 },
  ],
  ['recorded', 'other technician', tech2, { edit: 403, attach: true, signPerformed: 403, signWitnessed: 409 }],
  ['recorded', 'supervisor', sup, { edit: 403, attach: 403, signPerformed: 403, signAccepted: 409 }],
  ['recorded', 'technician of another site', otherSite, { edit: 403, signPerformed: 403, signWitnessed: 403 }],
  ['performed', 'recorder', tech, { edit: 409, attach: 409, signPerformed: 409, signReturnedToService: true }],
  ['performed', 'other technician', tech2, { signWitnessed: true, signReturnedToService: true, signAccepted: 403 }],
  ['performed', 'engineer', eng, { signWitnessed: true, signReturnedToService: 403, signAccepted: 403 }],
  ['performed', 'operator', operator, { signWitnessed: 403, signAccepted: 409 }],
  // the return-to-service check is its own signature, by a technician; operations accept only after it
  ['performed', 'supervisor', sup, { signReturnedToService: 403, signAccepted: 409, signWitnessed: true }],
  ['performed', 'plant manager', manager, { signReturnedToService: 403, signAccepted: 403 }],
  ['returned', 'operator', operator, { signAccepted: true, signReturnedToService: 403 }],
  ['returned', 'supervisor', sup, { signAccepted: true, signWitnessed: true }],
  ['returned', 'recorder', tech, { signReturnedToService: 409, signAccepted: 403 }],
  // one person may not perform a test and accept the equipment back, even holding both roles
  ['returned', 'recorder who is also supervisor', techAndSup, { signAccepted: 403, signWitnessed: 403 }],
  ['returned', 'plant manager', manager, { signAccepted: 403, signWitnessed: 403 }],
  ['accepted', 'operator', operator, { signAccepted: 409 }],
]

describe('tripTestActions: state × role', () => {
  it.each(TABLE)('%s record, %s', (state, _who, who, expected) => {
    const v = tripTestActions(
      { siteId: SITE, recordedById: 1, sil: null, ...STATES[state] },
      who,
      DEFAULT_SITE_POLICY,
      NOW,
    )
    for (const [action, want] of Object.entries(expected)) {
      const got = v[action as TripTestAction]
      if (want === true) expect(got, action).toEqual({ allowed: true })
      else {
        expect(got.allowed, action).toBe(false)
        if (!got.allowed) {
          expect(got.status, `${action}: ${got.reason}`).toBe(want)
          expect(got.reason.length).toBeGreaterThan(10)
        }
      }
    }
  })
})

describe('isComplete: witness by policy', () => {
  const all = new Set(['performed', 'returned_to_service', 'accepted'])
  it.each([
    ['sil_only', null, true],
    ['sil_only', 2, false],
    ['all', null, false],
    ['none', 3, true],
  ] as const)('witnessRequiredFor %s, SIL %s → complete without witness: %s', (policy, sil, complete) => {
    expect(isComplete(all, { witnessRequiredFor: policy }, sil)).toBe(complete)
    expect(isComplete(new Set([...all, 'witnessed']), { witnessRequiredFor: policy }, sil)).toBe(true)
  })
  it('needs the return-to-service signature', () => {
    expect(isComplete(new Set(['performed', 'accepted']), { witnessRequiredFor: 'none' }, null)).toBe(false)
  })
})

describe('overdue and due soon: one definition', () => {
  it.each([
    ['overdue', true, false],
    ['never_tested', true, false],
    ['in_grace', false, true],
    ['due_soon', false, true],
    ['ok', false, false],
  ] as const)('%s: overdue %s, due soon %s', (status, overdue, soon) => {
    expect(isTestOverdue(status)).toBe(overdue)
    expect(isTestDueSoon(status)).toBe(soon)
  })
})

describe('graceDaysFor: SIL-rated functions get no automatic grace; never more than half the interval', () => {
  const p = DEFAULT_SITE_POLICY
  const limit = { testGraceDays: null, codeSetInterval: false, testIntervalMonths: 12, sil: null }
  it.each([
    // 12 months × 730 h × 10 % / 24 = 36.5 days → capped at the policy's 30 days
    [{ ...limit }, p, 30],
    // SIL-rated: the policy's SIL fraction, 0 by default
    [{ ...limit, sil: 2 }, p, 0],
    [{ ...limit, sil: 2 }, { ...p, testGraceFractionSil: 0.05 }, 18],
    // code-set interval: 0
    [{ ...limit, codeSetInterval: true }, p, 0],
    // a limit's own grace is bounded to half the interval: 1 month = 30.4 days → at most 15
    [{ ...limit, testIntervalMonths: 1, testGraceDays: 40 }, p, 15],
    // a policy share of 50 % with 90 days on a 3-month interval: half of 91.25 days = 45
    [{ ...limit, testIntervalMonths: 3 }, { ...p, testGraceFraction: 0.5, testGraceMaxDays: 90 }, 45],
  ] as const)('%o under policy → %i days', (l, policy, days) => {
    expect(graceDaysFor(l, policy)).toBe(days)
  })
})

describe('degraded limits: repair deadline against the assumed MTTR', () => {
  const opened = new Date('2026-03-01T10:00:00Z')
  it('is within the MTTR up to the hour, beyond it after (8 h MTTR)', () => {
    expect(checkRepairDeadline(opened, new Date('2026-03-01T18:00:00Z'), 8).beyondMttr).toBe(false)
    const beyond = checkRepairDeadline(opened, new Date('2026-03-01T18:00:01Z'), 8)
    expect(beyond.beyondMttr).toBe(true)
    expect(beyond.warning).toContain('8 h MTTR')
    expect(checkRepairDeadline(opened, new Date('2027-01-01T00:00:00Z'), null)).toEqual({
      beyondMttr: false,
      mttrEnd: null,
      warning: null,
    })
  })
  it('takes the largest subsystem MTTR as the function MTTR', () => {
    expect(functionMttrHours([{ mttrHours: 8 }, { mttrHours: 72 }, { mttrHours: 24 }])).toBe(72)
    expect(functionMttrHours([])).toBeNull()
  })
  const base = {
    siteId: SITE,
    cleared: false,
    openedAt: opened,
    measuresSigned: true,
    deadlineBeyondMttr: true,
    deadlineApproved: false,
  }
  it.each([
    ['supervisor signs measures', base, sup, 'signMeasures', true],
    ['technician does not', base, tech, 'signMeasures', 403],
    ['not after clearing', { ...base, cleared: true }, sup, 'signMeasures', 409],
    ['plant manager approves beyond MTTR', base, manager, 'approveDeadline', true],
    ['supervisor does not approve', base, sup, 'approveDeadline', 403],
    ['nothing to approve within MTTR', { ...base, deadlineBeyondMttr: false }, manager, 'approveDeadline', 409],
    ['approved once', { ...base, deadlineApproved: true }, manager, 'approveDeadline', 409],
    ['measures first', { ...base, measuresSigned: false }, manager, 'approveDeadline', 409],
  ] as const)('%s', (_name, d, who, action, want) => {
    const v = degradationActions(d, who, null, NOW)[action]
    if (want === true) expect(v.allowed).toBe(true)
    else expect(v).toMatchObject({ allowed: false, status: want })
  })
  // asked before the degraded state is read: the role alone, with the refusal the approval endpoint answers
  it.each([
    ['plant manager', manager, true],
    ['shift supervisor', sup, 403],
    ['technician', tech, 403],
    ['no role at the site', actor(9), 403],
  ] as const)('deadline approval standing: %s', (_name, who, want) => {
    const v = deadlineApprovalStanding(who)
    if (want === true) expect(v).toEqual({ allowed: true })
    else
      expect(v).toEqual({
        allowed: false,
        status: want,
        reason: 'The plant manager approves a repair deadline beyond the MTTR',
      })
    // the same refusal heads the approveDeadline action on any degraded state
    expect(degradationActions(base, who, null, NOW).approveDeadline).toEqual(v)
  })
})

describe('test deferrals', () => {
  const p = DEFAULT_SITE_POLICY
  it('are approved at the level the policy sets per SIL', () => {
    expect(deferralApproverRole(p, null)).toBe('approver')
    expect(deferralApproverRole(p, 1)).toBe('approver')
    expect(deferralApproverRole(p, 2)).toBe('plant_manager')
    expect(deferralApproverRole(p, 3)).toBe('plant_manager')
    expect(
      deferralApproverRole({ deferralApproverRole: { ...p.deferralApproverRole, sil1: 'safety_engineer' } }, 1),
    ).toBe('safety_engineer')
  })
  it('extend by at most the policy share of the interval (25 % of 12 months = 91 days)', () => {
    expect(maxDeferralDays(p, 12)).toBe(91)
    expect(maxDeferralDays(p, 1)).toBe(7)
  })
  const req = {
    siteId: SITE,
    limitActive: true,
    dueDate: '2026-03-10',
    today: '2026-03-01',
    newDueDate: '2026-04-10',
    intervalMonths: 12,
    openDeferral: false,
    extensionDays: 31,
  }
  it.each([
    ['technician requests', req, tech, true],
    ['engineer requests', req, eng, true],
    ['operator does not', req, operator, 403],
    ['one open deferral at a time', { ...req, openDeferral: true }, tech, 409],
    ['never tested: nothing to defer', { ...req, dueDate: null }, tech, 409],
    ['inactive limit', { ...req, limitActive: false }, tech, 409],
    ['91 days is the most', { ...req, extensionDays: 91, newDueDate: '2026-06-09' }, tech, true],
    ['92 days is too many', { ...req, extensionDays: 92, newDueDate: '2026-06-10' }, tech, 422],
    ['a new date in the past', { ...req, newDueDate: '2026-02-28', extensionDays: 1 }, tech, 422],
  ] as const)('%s', (_name, c, who, want) => {
    const v = checkDeferralRequest(c, who, p)
    if (want === true) expect(v.allowed).toBe(true)
    else expect(v).toMatchObject({ allowed: false, status: want })
  })
  const d = { siteId: SITE, status: 'requested' as const, requestedById: 1, requiredRole: 'plant_manager' as const }
  it.each([
    ['the plant manager decides', d, manager, true],
    ['an approver does not, when the policy names the plant manager', d, actor(8, 'approver'), 403],
    ['never the requester', { ...d, requestedById: 6 }, manager, 403],
    ['only while requested', { ...d, status: 'approved' as const }, manager, 409],
  ] as const)('%s', (_name, rec, who, want) => {
    const v = deferralActions(rec, who, null, NOW)
    for (const action of ['approve', 'reject'] as const)
      if (want === true) expect(v[action].allowed).toBe(true)
      else expect(v[action]).toMatchObject({ allowed: false, status: want })
  })
})

import { describe, expect, it } from 'vitest'
import {
  CHANGE_ACTIONS,
  type ChangeAction,
  type ChangeRuleRecord,
  changeRequestRules,
  changeWaitingSites,
  defaultChangeView,
  implementItemVerdict,
  temporaryState,
} from '../../../../shared/domain/rules/change-requests.ts'
import type { Role } from '../../../../shared/schemas/users.ts'
import { actorsOf, changeRecord, checklist, COMMON_PEOPLE, NOW, sig } from './change-request-fixtures.ts'

// The rule book of management of change, state × role, against the table written by hand below
// (docs/change-requests.md#the-rule-book). Sources of the rules: OSHA 1910.119(l) and (i) for the order of work,
// IEC 61511-1 independence of the approver (from memory), separation of duties as common practice.
const PEOPLE: Record<string, { id: number; roles: Role[] }> = {
  ...COMMON_PEOPLE,
  elsewhere: { id: 8, roles: [] },
  approverTech: { id: 10, roles: ['approver', 'technician'] },
}
const actor = actorsOf(PEOPLE, ['safety_engineer', 'approver'])
const record = changeRecord

/** The one modify item of changeRecord, put on the device at `at`. */
const onDevice = (at: string) => [{ id: 11, kind: 'modify' as const, implementedAt: at, stale: false }]
/** Approved on 31 May by the approver (person 2), the before-implementation checklist done. */
const APPROVED: Partial<ChangeRuleRecord> = {
  status: 'approved',
  approvedAt: '2026-05-31T10:00:00Z',
  signatures: [sig(2, 'approved')],
  checklist: checklist('before'),
}
/** Approved on 31 May by person 2, put on the device by the technician (person 3) an hour later. */
const IMPLEMENTED: Partial<ChangeRuleRecord> = {
  status: 'implemented',
  approvedAt: '2026-05-31T10:00:00Z',
  signatures: [sig(2, 'approved'), sig(3, 'implemented')],
  items: onDevice('2026-05-31T11:00:00Z'),
}
/** An emergency change put on the device by `implementer` before anyone approved it, the checklist all done. */
const emergencyImplementedBy = (implementer: number) =>
  record({
    type: 'emergency',
    status: 'implemented',
    checklist: checklist('all'),
    signatures: [sig(implementer, 'implemented')],
    items: onDevice('2026-05-31T11:00:00Z'),
  })
/** A temporary change approved on 20 May, on the device from 21 May, whose end (31 May) has passed. */
const TEMPORARY_PAST_END: Partial<ChangeRuleRecord> = {
  type: 'temporary',
  approvedAt: '2026-05-20T10:00:00Z',
  expiresAt: '2026-05-31T10:00:00Z',
  items: onDevice('2026-05-21T11:00:00Z'),
}

const STATES: Record<string, ChangeRuleRecord> = {
  draft: record({}),
  submitted: record({ status: 'submitted', checklist: checklist('before') }),
  submittedSigned: record({ status: 'submitted', signatures: [sig(12, 'approved')] }),
  editedByApprover: record({ status: 'submitted', editorIds: [2] }),
  approvedNotReady: record({ ...APPROVED, checklist: checklist('none') }),
  approvedReady: record({ ...APPROVED, approvalExpiresAt: '2026-06-30T10:00:00Z' }),
  approvedExpired: record({
    ...APPROVED,
    approvedAt: '2026-04-01T10:00:00Z',
    approvalExpiresAt: '2026-05-01T10:00:00Z',
  }),
  approvedByApproverTech: record({ ...APPROVED, signatures: [sig(10, 'approved')] }),
  baselineReady: record({
    ...APPROVED,
    items: [
      { id: 11, kind: 'create', implementedAt: null, stale: false },
      { id: 12, kind: 'create', implementedAt: null, stale: false },
    ],
  }),
  emergencySubmitted: record({ type: 'emergency', status: 'submitted', checklist: checklist('before') }),
  emergencyImplementedBySupervisor: emergencyImplementedBy(4),
  emergencyImplementedByApproverTech: emergencyImplementedBy(10),
  implementedOpenCloseout: record({ ...IMPLEMENTED, checklist: checklist('before') }),
  implementedReady: record({ ...IMPLEMENTED, checklist: checklist('all') }),
  closed: record({ status: 'closed', approvedAt: '2026-05-31T10:00:00Z', checklist: checklist('all') }),
  // temporary changes (docs/change-requests.md#expired-temporary-changes); NOW is 2026-06-01T10:00Z
  tempOnDevice: record({
    ...IMPLEMENTED,
    type: 'temporary',
    expiresAt: '2026-06-02T10:00:00Z',
    checklist: checklist('before'),
  }),
  tempExpired: record({ ...TEMPORARY_PAST_END, status: 'closed', checklist: checklist('all') }),
  tempReversalUnderWay: record({
    ...TEMPORARY_PAST_END,
    status: 'implemented',
    checklist: checklist('before'),
    reversals: [
      { id: 40, status: 'rejected' },
      { id: 41, status: 'submitted' },
    ],
  }),
  tempReverted: record({
    ...TEMPORARY_PAST_END,
    status: 'implemented',
    checklist: checklist('before'),
    reversals: [{ id: 41, status: 'implemented' }],
  }),
  tempApprovedPastEnd: record({
    ...APPROVED,
    type: 'temporary',
    approvedAt: '2026-05-20T10:00:00Z',
    approvalExpiresAt: '2026-06-19T10:00:00Z',
    expiresAt: '2026-05-31T10:00:00Z',
  }),
  withdrawn: record({ status: 'withdrawn' }),
  rejected: record({ status: 'rejected', signatures: [sig(2, 'rejected')] }),
}

/** The actions allowed, by state and person; everything not listed is refused. Written by hand. */
const TABLE: [state: keyof typeof STATES, who: keyof typeof PEOPLE, allowed: ChangeAction[]][] = [
  ['draft', 'engineer', ['edit', 'withdraw', 'submit', 'attach', 'tick']],
  ['draft', 'engineer2', ['edit', 'withdraw', 'submit', 'attach', 'tick']],
  ['draft', 'approver', []],
  ['draft', 'operator', []],
  ['draft', 'elsewhere', []],
  ['submitted', 'engineer', ['edit', 'withdraw', 'attach', 'tick']],
  ['submitted', 'approver', ['approve', 'reject']],
  ['submitted', 'approverTech', ['approve', 'reject']],
  ['submitted', 'technician', []],
  ['submitted', 'supervisor', []],
  ['submitted', 'auditor', []],
  ['submitted', 'elsewhere', []],
  ['submittedSigned', 'engineer', ['edit', 'withdraw', 'tick']],
  ['editedByApprover', 'approver', []],
  ['approvedNotReady', 'technician', []],
  ['approvedNotReady', 'engineer', ['tick']],
  ['approvedReady', 'technician', ['implement']],
  ['approvedReady', 'control', ['implement']],
  ['approvedReady', 'approver', []],
  ['approvedReady', 'supervisor', []],
  ['approvedReady', 'operator', []],
  ['approvedExpired', 'technician', []],
  ['approvedByApproverTech', 'approverTech', []],
  ['approvedByApproverTech', 'technician', ['implement']],
  ['baselineReady', 'technician', ['implement', 'implementAll']],
  ['emergencySubmitted', 'supervisor', ['implement']],
  ['emergencySubmitted', 'technician', []],
  ['emergencySubmitted', 'control', []],
  ['emergencySubmitted', 'approver', ['approve', 'reject']],
  ['emergencySubmitted', 'engineer', ['edit', 'withdraw', 'attach', 'tick']],
  ['emergencyImplementedBySupervisor', 'approver', ['approve']],
  ['emergencyImplementedBySupervisor', 'engineer', ['tick']],
  ['emergencyImplementedByApproverTech', 'approverTech', []],
  ['emergencyImplementedByApproverTech', 'approver', ['approve']],
  ['implementedOpenCloseout', 'engineer', ['tick']],
  ['implementedReady', 'engineer', ['tick', 'close']],
  ['implementedReady', 'approver', []],
  ['closed', 'engineer', []],
  ['closed', 'approver', []],
  ['withdrawn', 'engineer', []],
  ['rejected', 'engineer', []],
  ['tempOnDevice', 'engineer', ['tick', 'proposeReversal']],
  ['tempOnDevice', 'supervisor', []],
  ['tempOnDevice', 'operator', []],
  ['tempExpired', 'engineer', ['proposeReversal']],
  ['tempExpired', 'engineer2', ['proposeReversal']],
  ['tempExpired', 'approver', []],
  ['tempExpired', 'elsewhere', []],
  ['tempReversalUnderWay', 'engineer', ['tick']],
  ['tempReverted', 'engineer', ['tick']],
  ['tempApprovedPastEnd', 'technician', []],
  ['tempApprovedPastEnd', 'engineer', ['tick']],
]

describe('change-request rule book: state × role', () => {
  it.each(TABLE)('%s, %s may %j', (state, who, allowed) => {
    const rules = changeRequestRules(STATES[state], actor(who), NOW)
    const got = CHANGE_ACTIONS.filter((a) => rules[a].allowed)
    expect(got.sort()).toEqual([...allowed].sort())
    for (const a of CHANGE_ACTIONS) {
      const v = rules[a]
      if (!v.allowed) expect(v.reason.length, `${a} gives a reason`).toBeGreaterThan(10)
    }
  })
})

describe('temporary changes: their standing and the reversal', () => {
  // written by hand from docs/change-requests.md#expired-temporary-changes (common practice: a temporary change
  // past its end is reverted through a change request of its own, OSHA 1910.119(l))
  it.each([
    ['tempOnDevice', 'open'],
    ['tempExpired', 'expired'],
    ['tempReversalUnderWay', 'expired'],
    ['tempReverted', 'reverted'],
    ['tempApprovedPastEnd', null],
    ['implementedReady', null],
  ] as const)('%s is %s', (state, expected) => {
    expect(temporaryState(STATES[state], NOW)).toBe(expected)
  })

  it('turns expired at its end exactly, and is open a millisecond before', () => {
    const cr = { ...STATES.tempOnDevice, expiresAt: NOW.toISOString() }
    expect(temporaryState(cr, NOW)).toBe('expired')
    expect(temporaryState(cr, new Date(NOW.getTime() - 1))).toBe('open')
  })

  it('answers why a reversal is refused', () => {
    const v = (state: keyof typeof STATES, who: keyof typeof PEOPLE) =>
      changeRequestRules(STATES[state], actor(who), NOW).proposeReversal
    expect(v('tempReversalUnderWay', 'engineer')).toMatchObject({ status: 409, reason: expect.stringContaining('#41') })
    expect(v('tempReverted', 'engineer')).toMatchObject({ status: 409, reason: expect.stringContaining('reverted') })
    expect(v('tempExpired', 'operator')).toMatchObject({ status: 403 })
    expect(v('implementedReady', 'engineer')).toMatchObject({ status: 409 })
    expect(changeRequestRules(STATES.tempApprovedPastEnd, actor('technician'), NOW).implement).toMatchObject({
      status: 409,
      reason: expect.stringContaining('passed its end'),
    })
  })
})

describe('change-request rule book: the answers and their HTTP status', () => {
  const verdict = (state: keyof typeof STATES, who: keyof typeof PEOPLE, action: ChangeAction) =>
    changeRequestRules(STATES[state], actor(who), NOW)[action]

  /** [state, who, action, the status of the refusal, what its reason names (where checked)] */
  type Refusal = [
    state: keyof typeof STATES,
    who: keyof typeof PEOPLE,
    action: ChangeAction,
    status: number,
    reason?: string,
  ]
  const refused = ([state, who, action, status, reason]: Refusal) =>
    expect(verdict(state, who, action)).toMatchObject(
      reason === undefined ? { status } : { status, reason: expect.stringContaining(reason) },
    )

  it.each<Refusal>([
    ['submitted', 'engineer', 'approve', 403],
    ['editedByApprover', 'approver', 'approve', 403, 'edited'],
    ['emergencyImplementedByApproverTech', 'approverTech', 'approve', 403, 'implemented'],
    ['approvedByApproverTech', 'approverTech', 'implement', 403, 'approved'],
    ['emergencySubmitted', 'technician', 'implement', 403, 'shift supervisor'],
  ])('separation of duties: %s, %s may not %s (%i with the reason)', (...refusal) => refused(refusal))

  it('separation of duties: the approver may approve, but not what they proposed (403)', () => {
    const own = changeRequestRules(STATES.submitted, actor('approver'), NOW)
    expect(own.approve.allowed).toBe(true)
    const proposed = changeRequestRules({ ...STATES.submitted, proposerId: 2 }, actor('approver'), NOW)
    expect(proposed.approve).toMatchObject({ status: 403, reason: expect.stringContaining('proposed') })
  })

  it.each<Refusal>([
    ['approvedNotReady', 'technician', 'implement', 409, 'Operating procedures updated'],
    ['approvedExpired', 'technician', 'implement', 409, 'expired'],
    ['submittedSigned', 'engineer', 'attach', 409],
    ['closed', 'engineer', 'attach', 409],
    ['implementedOpenCloseout', 'engineer', 'close', 422, 'Drawings'],
    ['emergencyImplementedBySupervisor', 'engineer', 'close', 409, 'not approved'],
    ['approvedReady', 'technician', 'implementAll', 409],
  ])('the state and the clock answer 409, the close-out checklist 422: %s, %s, %s', (...refusal) => refused(refusal))

  it('one item: implemented already or stale is refused, the others follow the request', () => {
    const cr = STATES.approvedReady
    const tech = actor('technician')
    expect(implementItemVerdict(cr, cr.items[0], tech, NOW)).toEqual({ allowed: true })
    expect(implementItemVerdict(cr, { ...cr.items[0], stale: true }, tech, NOW)).toMatchObject({ status: 409 })
    expect(
      implementItemVerdict(cr, { ...cr.items[0], implementedAt: '2026-05-31T12:00:00Z' }, tech, NOW),
    ).toMatchObject({ status: 409, reason: expect.stringContaining('already') })
  })
})

// Who a request waits for, by role and site (docs/api.md#change-requests, "Waiting for me"), and the list's first tab.
describe('waiting for me', () => {
  const none = { approve: [], implement: [], emergency: [], close: [] }
  it.each([
    ['approver at site 1', [{ role: 'approver', siteId: 1 }], { ...none, approve: [1] }, 'waiting'],
    ['technician at site 2', [{ role: 'technician', siteId: 2 }], { ...none, implement: [2] }, 'waiting'],
    ['control engineer at site 1', [{ role: 'control_engineer', siteId: 1 }], { ...none, implement: [1] }, 'waiting'],
    ['shift supervisor at site 3', [{ role: 'shift_supervisor', siteId: 3 }], { ...none, emergency: [3] }, 'waiting'],
    ['safety engineer at site 1', [{ role: 'safety_engineer', siteId: 1 }], { ...none, close: [1] }, 'mine'],
    [
      'approver at 1, technician at 2, safety engineer at 2',
      [
        { role: 'approver', siteId: 1 },
        { role: 'technician', siteId: 2 },
        { role: 'safety_engineer', siteId: 2 },
      ],
      { ...none, approve: [1], implement: [2], close: [2] },
      'waiting',
    ],
    ['operator', [{ role: 'operator', siteId: 1 }], none, 'all'],
    ['plant manager', [{ role: 'plant_manager', siteId: 1 }], none, 'all'],
    ['admin', [{ role: 'admin', siteId: 1 }], none, 'all'],
    ['no roles', [], none, 'all'],
  ] as const)('%s', (_name, roles, sites, view) => {
    expect(changeWaitingSites(roles)).toEqual(sites)
    expect(defaultChangeView(roles)).toBe(view)
  })
})

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

const STATES: Record<string, ChangeRuleRecord> = {
  draft: record({}),
  submitted: record({ status: 'submitted', checklist: checklist('before') }),
  submittedSigned: record({ status: 'submitted', signatures: [sig(12, 'approved')] }),
  editedByApprover: record({ status: 'submitted', editorIds: [2] }),
  approvedNotReady: record({
    status: 'approved',
    approvedAt: '2026-05-31T10:00:00Z',
    signatures: [sig(2, 'approved')],
  }),
  approvedReady: record({
    status: 'approved',
    approvedAt: '2026-05-31T10:00:00Z',
    approvalExpiresAt: '2026-06-30T10:00:00Z',
    signatures: [sig(2, 'approved')],
    checklist: checklist('before'),
  }),
  approvedExpired: record({
    status: 'approved',
    approvedAt: '2026-04-01T10:00:00Z',
    approvalExpiresAt: '2026-05-01T10:00:00Z',
    signatures: [sig(2, 'approved')],
    checklist: checklist('before'),
  }),
  approvedByApproverTech: record({
    status: 'approved',
    approvedAt: '2026-05-31T10:00:00Z',
    signatures: [sig(10, 'approved')],
    checklist: checklist('before'),
  }),
  baselineReady: record({
    status: 'approved',
    approvedAt: '2026-05-31T10:00:00Z',
    signatures: [sig(2, 'approved')],
    checklist: checklist('before'),
    items: [
      { id: 11, kind: 'create', implementedAt: null, stale: false },
      { id: 12, kind: 'create', implementedAt: null, stale: false },
    ],
  }),
  emergencySubmitted: record({ type: 'emergency', status: 'submitted', checklist: checklist('before') }),
  emergencyImplementedBySupervisor: record({
    type: 'emergency',
    status: 'implemented',
    checklist: checklist('all'),
    signatures: [sig(4, 'implemented')],
    items: [{ id: 11, kind: 'modify', implementedAt: '2026-05-31T11:00:00Z', stale: false }],
  }),
  emergencyImplementedByApproverTech: record({
    type: 'emergency',
    status: 'implemented',
    checklist: checklist('all'),
    signatures: [sig(10, 'implemented')],
    items: [{ id: 11, kind: 'modify', implementedAt: '2026-05-31T11:00:00Z', stale: false }],
  }),
  implementedOpenCloseout: record({
    status: 'implemented',
    approvedAt: '2026-05-31T10:00:00Z',
    checklist: checklist('before'),
    signatures: [sig(2, 'approved'), sig(3, 'implemented')],
    items: [{ id: 11, kind: 'modify', implementedAt: '2026-05-31T11:00:00Z', stale: false }],
  }),
  implementedReady: record({
    status: 'implemented',
    approvedAt: '2026-05-31T10:00:00Z',
    checklist: checklist('all'),
    signatures: [sig(2, 'approved'), sig(3, 'implemented')],
    items: [{ id: 11, kind: 'modify', implementedAt: '2026-05-31T11:00:00Z', stale: false }],
  }),
  closed: record({ status: 'closed', approvedAt: '2026-05-31T10:00:00Z', checklist: checklist('all') }),
  // temporary changes (docs/change-requests.md#expired-temporary-changes); NOW is 2026-06-01T10:00Z
  tempOnDevice: record({
    type: 'temporary',
    status: 'implemented',
    approvedAt: '2026-05-31T10:00:00Z',
    expiresAt: '2026-06-02T10:00:00Z',
    checklist: checklist('before'),
    signatures: [sig(2, 'approved'), sig(3, 'implemented')],
    items: [{ id: 11, kind: 'modify', implementedAt: '2026-05-31T11:00:00Z', stale: false }],
  }),
  tempExpired: record({
    type: 'temporary',
    status: 'closed',
    approvedAt: '2026-05-20T10:00:00Z',
    expiresAt: '2026-05-31T10:00:00Z',
    checklist: checklist('all'),
    items: [{ id: 11, kind: 'modify', implementedAt: '2026-05-21T11:00:00Z', stale: false }],
  }),
  tempReversalUnderWay: record({
    type: 'temporary',
    status: 'implemented',
    approvedAt: '2026-05-20T10:00:00Z',
    expiresAt: '2026-05-31T10:00:00Z',
    checklist: checklist('before'),
    reversals: [
      { id: 40, status: 'rejected' },
      { id: 41, status: 'submitted' },
    ],
    items: [{ id: 11, kind: 'modify', implementedAt: '2026-05-21T11:00:00Z', stale: false }],
  }),
  tempReverted: record({
    type: 'temporary',
    status: 'implemented',
    approvedAt: '2026-05-20T10:00:00Z',
    expiresAt: '2026-05-31T10:00:00Z',
    checklist: checklist('before'),
    reversals: [{ id: 41, status: 'implemented' }],
    items: [{ id: 11, kind: 'modify', implementedAt: '2026-05-21T11:00:00Z', stale: false }],
  }),
  tempApprovedPastEnd: record({
    type: 'temporary',
    status: 'approved',
    approvedAt: '2026-05-20T10:00:00Z',
    approvalExpiresAt: '2026-06-19T10:00:00Z',
    expiresAt: '2026-05-31T10:00:00Z',
    signatures: [sig(2, 'approved')],
    checklist: checklist('before'),
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

  it('separation of duties answers 403 with the reason', () => {
    expect(verdict('submitted', 'engineer', 'approve')).toMatchObject({ status: 403 })
    const own = changeRequestRules(STATES.submitted, actor('approver'), NOW)
    expect(own.approve.allowed).toBe(true)
    const proposed = changeRequestRules({ ...STATES.submitted, proposerId: 2 }, actor('approver'), NOW)
    expect(proposed.approve).toMatchObject({ status: 403, reason: expect.stringContaining('proposed') })
    expect(verdict('editedByApprover', 'approver', 'approve')).toMatchObject({
      status: 403,
      reason: expect.stringContaining('edited'),
    })
    expect(verdict('emergencyImplementedByApproverTech', 'approverTech', 'approve')).toMatchObject({
      status: 403,
      reason: expect.stringContaining('implemented'),
    })
    expect(verdict('approvedByApproverTech', 'approverTech', 'implement')).toMatchObject({
      status: 403,
      reason: expect.stringContaining('approved'),
    })
    expect(verdict('emergencySubmitted', 'technician', 'implement')).toMatchObject({
      status: 403,
      reason: expect.stringContaining('shift supervisor'),
    })
  })

  it('the state and the clock answer 409; the close-out checklist 422', () => {
    expect(verdict('approvedNotReady', 'technician', 'implement')).toMatchObject({
      status: 409,
      reason: expect.stringContaining('Operating procedures updated'),
    })
    expect(verdict('approvedExpired', 'technician', 'implement')).toMatchObject({
      status: 409,
      reason: expect.stringContaining('expired'),
    })
    expect(verdict('submittedSigned', 'engineer', 'attach')).toMatchObject({ status: 409 })
    expect(verdict('closed', 'engineer', 'attach')).toMatchObject({ status: 409 })
    expect(verdict('implementedOpenCloseout', 'engineer', 'close')).toMatchObject({
      status: 422,
      reason: expect.stringContaining('Drawings'),
    })
    expect(verdict('emergencyImplementedBySupervisor', 'engineer', 'close')).toMatchObject({
      status: 409,
      reason: expect.stringContaining('not approved'),
    })
    expect(verdict('approvedReady', 'technician', 'implementAll')).toMatchObject({ status: 409 })
  })

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

import { describe, expect, it } from 'vitest'
import { createAppAbility, defineRulesFor } from '../../../../shared/abilities/index.ts'
import { canRecordDemand, demandVerdicts, type DemandFacts } from '../../../../shared/domain/rules/demands.ts'
import type { Role } from '../../../../shared/schemas/users.ts'

// Rule book of the demand and trip log, state × role × policy. The crediting conditions follow IEC 61511-1 §16.3
// practice (a demand that exercised the whole function may stand in for a proof test; from memory).
const now = new Date('2026-06-01T12:00:00Z')
const actor = (role: Role, siteId = 1) => ({
  userId: 7,
  ability: createAppAbility(defineRulesFor({ id: 7, roles: [{ siteId, role }] })),
})
const success: DemandFacts = {
  siteId: 1,
  kind: 'real_demand',
  outcome: 'acted',
  occurredAt: new Date('2026-05-30T00:00:00Z'),
  wholeFunction: true,
  status: 'classified',
  counts: true,
  creditedAsTest: false,
  recordedBy: 3,
}
const allowCredit = { demandCreditAllowed: true }

describe('record', () => {
  type Input = Parameters<typeof canRecordDemand>[1]
  const input: Input = { siteId: 1, kind: 'spurious_trip', outcome: null, occurredAt: success.occurredAt }
  it.each<[Role, boolean]>([
    ['operator', true],
    ['shift_supervisor', true],
    ['safety_engineer', true],
    ['technician', false],
    ['approver', false],
    ['plant_manager', false],
    ['auditor', false],
    ['admin', false],
  ])('%s may record: %s', (role, allowed) => {
    const v = canRecordDemand(actor(role), input, now)
    expect(v.allowed).toBe(allowed)
    if (!v.allowed) expect(v.status).toBe(403)
  })

  it('only at the sites where the role is held', () => {
    expect(canRecordDemand(actor('operator', 2), input, now)).toMatchObject({ allowed: false, status: 403 })
  })

  it.each<[string, Partial<Input>]>([
    ['in the future', { occurredAt: new Date('2026-06-01T12:00:01Z') }],
    ['a real demand without outcome', { kind: 'real_demand', outcome: null }],
    ['a spurious trip with an outcome', { outcome: 'acted' }],
  ])('refuses %s (422)', (_name, change) => {
    expect(canRecordDemand(actor('operator'), { ...input, ...change }, now)).toMatchObject({
      allowed: false,
      status: 422,
    })
  })

  it('accepts an event at this very moment', () => {
    expect(canRecordDemand(actor('operator'), { ...input, occurredAt: now }, now).allowed).toBe(true)
  })
})

describe('classify', () => {
  it.each<[Role, DemandFacts['status'], boolean, number | null]>([
    ['safety_engineer', 'recorded', true, null],
    ['safety_engineer', 'classified', false, 409],
    ['operator', 'recorded', false, 403],
    ['shift_supervisor', 'recorded', false, 403],
    ['approver', 'recorded', false, 403],
  ])('%s on a %s event → %s', (role, status, allowed, code) => {
    const v = demandVerdicts({ ...success, status }, actor(role), allowCredit, now).classify
    expect(v.allowed).toBe(allowed)
    if (!v.allowed) expect(v.status).toBe(code)
  })
})

describe('credit as a proof test', () => {
  it.each<[string, Partial<DemandFacts>, boolean, Role, number | null, RegExp | null]>([
    ['a classified successful whole-function demand', {}, true, 'safety_engineer', null, null],
    ['the same by an operator', {}, true, 'operator', 403, /Safety engineers/],
    ['policy forbids', {}, false, 'safety_engineer', 409, /site policy/],
    ['failed to act', { outcome: 'failed_to_act' }, true, 'safety_engineer', 409, /acted/],
    ['a spurious trip', { kind: 'spurious_trip', outcome: null }, true, 'safety_engineer', 409, /acted/],
    ['part of the function', { wholeFunction: false }, true, 'safety_engineer', 409, /whole function/],
    ['not yet classified', { status: 'recorded', counts: null }, true, 'safety_engineer', 409, /Classify/],
    ['classified as not counting', { counts: false }, true, 'safety_engineer', 409, /Classify/],
    ['already credited', { creditedAsTest: true }, true, 'safety_engineer', 409, /already credited/],
  ])('%s', (_name, change, policy, role, code, reason) => {
    const v = demandVerdicts({ ...success, ...change }, actor(role), { demandCreditAllowed: policy }, now).credit
    expect(v.allowed).toBe(code === null)
    if (!v.allowed) {
      expect(v.status).toBe(code)
      expect(v.reason).toMatch(reason!)
    }
  })
})

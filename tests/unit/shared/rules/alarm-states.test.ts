import { describe, expect, it } from 'vitest'
import {
  type AlarmStateRecord,
  type AlarmStateRequest,
  alarmStateVerdicts,
  DEFAULT_ALARM_STATE_POLICY,
  isOverdue,
  mayStart,
  startableKinds,
} from '../../../../shared/domain/rules/alarm-states.ts'
import type { Role } from '../../../../shared/schemas/users.ts'

// Shelving, suppression by design and out of service as ISA-18.2 separates them; the maximum shelving time refusal
// follows OPC UA Part 9 (MaxTimeShelved). Limits per priority are the site policy's defaults (common practice).
const policy = DEFAULT_ALARM_STATE_POLICY
const req = (r: Partial<AlarmStateRequest>): AlarmStateRequest => ({
  kind: 'shelved',
  priority: 'medium',
  safetyRelated: false,
  hours: 2,
  signed: false,
  changeRequestId: null,
  ...r,
})
const actor = (...roles: Role[]) => ({ userId: 7, roles })

describe('mayStart: state × role × policy', () => {
  it.each<[string, Partial<AlarmStateRequest>, Role[], boolean | number]>([
    ['operator shelves a medium alarm for 2 h', {}, ['operator'], true],
    ['technician may not shelve', {}, ['technician'], 403],
    ['engineer may not shelve', {}, ['safety_engineer'], 403],
    ['medium: exactly the 8 h maximum', { hours: 8 }, ['operator'], true],
    ['medium: over the 8 h maximum', { hours: 8.01 }, ['operator'], 422],
    ['high: 4 h maximum', { priority: 'high', hours: 5 }, ['operator'], 422],
    ['no priority counts as low: 12 h', { priority: null, hours: 12 }, ['operator'], true],
    ['zero hours', { hours: 0 }, ['operator'], 422],
    ['safety-related by an operator', { safetyRelated: true }, ['operator'], 403],
    ['safety-related by a supervisor without signature', { safetyRelated: true }, ['shift_supervisor'], 403],
    [
      'safety-related by a supervisor with signature',
      { safetyRelated: true, signed: true },
      ['shift_supervisor'],
      true,
    ],
    ['suppression without change request', { kind: 'suppressed' }, ['safety_engineer'], 422],
    ['suppression under a change request', { kind: 'suppressed', changeRequestId: 3 }, ['safety_engineer'], true],
    ['suppression by an operator', { kind: 'suppressed', changeRequestId: 3 }, ['operator'], 403],
    ['out of service, supervisor signed', { kind: 'out_of_service', signed: true }, ['shift_supervisor'], true],
    ['out of service, supervisor unsigned', { kind: 'out_of_service' }, ['shift_supervisor'], 403],
    ['out of service, technician signed', { kind: 'out_of_service', signed: true }, ['technician'], 403],
    [
      'out of service longer than policy',
      { kind: 'out_of_service', signed: true, hours: 24 * 14 + 1 },
      ['shift_supervisor'],
      422,
    ],
  ])('%s', (_name, r, roles, expected) => {
    const v = mayStart(req(r), actor(...roles), policy, null)
    if (expected === true) expect(v).toEqual({ allowed: true })
    else expect(v).toMatchObject({ allowed: false, status: expected })
  })

  it('a site policy with a longer maximum allows it', () => {
    const longer = { ...policy, shelveMaxHours: { ...policy.shelveMaxHours, medium: 10 } }
    expect(mayStart(req({ hours: 9 }), actor('operator'), longer, null).allowed).toBe(true)
  })
  it('refuses a second state while one is active (409), not when the earlier one ended', () => {
    const current: AlarmStateRecord = { kind: 'shelved', status: 'active', until: new Date(0), startedBy: 1 }
    expect(mayStart(req({}), actor('operator'), policy, current)).toMatchObject({ status: 409 })
    expect(mayStart(req({}), actor('operator'), policy, { ...current, status: 'ended' }).allowed).toBe(true)
  })
})

describe('alarmStateVerdicts: end', () => {
  const rec = (r: Partial<AlarmStateRecord>): AlarmStateRecord => ({
    kind: 'shelved',
    status: 'active',
    until: new Date('2026-01-01T12:00:00Z'),
    startedBy: 7,
    ...r,
  })
  it.each<[string, Partial<AlarmStateRecord>, number, Role[], boolean | number]>([
    ['the shelving operator unshelves', {}, 7, ['operator'], true],
    ['another operator may not', {}, 8, ['operator'], 403],
    ['a supervisor unshelves', {}, 8, ['shift_supervisor'], true],
    ['ended already', { status: 'ended' }, 7, ['operator'], 409],
    ['engineer ends a suppression', { kind: 'suppressed' }, 8, ['safety_engineer'], true],
    ['operator may not end a suppression', { kind: 'suppressed' }, 7, ['operator'], 403],
    ['technician returns to service', { kind: 'out_of_service' }, 8, ['technician'], true],
    ['auditor may not return to service', { kind: 'out_of_service' }, 8, ['auditor'], 403],
  ])('%s', (_n, r, userId, roles, expected) => {
    const v = alarmStateVerdicts(rec(r), { userId, roles }).end
    if (expected === true) expect(v).toEqual({ allowed: true })
    else expect(v).toMatchObject({ allowed: false, status: expected })
  })
  it('is overdue at and after its until, not before', () => {
    const r = rec({})
    expect(isOverdue(r, new Date('2026-01-01T11:59:59Z'))).toBe(false)
    expect(isOverdue(r, new Date('2026-01-01T12:00:00Z'))).toBe(true)
    expect(isOverdue({ ...r, status: 'ended' }, new Date('2026-01-02T00:00:00Z'))).toBe(false)
  })
})

describe('startableKinds: what the screen offers each role (docs/alarms.md#alarm-states, "Who starts it")', () => {
  it.each<[Role[], string[]]>([
    [['operator'], ['shelved']],
    [['shift_supervisor'], ['shelved', 'out_of_service']],
    [['safety_engineer'], ['suppressed']],
    [
      ['operator', 'safety_engineer'],
      ['shelved', 'suppressed'],
    ],
    [['technician'], []],
    [['plant_manager'], []],
    [['auditor'], []],
    [[], []],
  ])('%j may start %j', (roles, kinds) => {
    expect(startableKinds({ roles })).toEqual(kinds)
  })
})

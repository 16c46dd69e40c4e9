import { describe, expect, it } from 'vitest'
import { createAppAbility, defineRulesFor } from '../../../../shared/abilities/index.ts'
import {
  activateVerdict,
  authorizerMaxHours,
  type BypassAction,
  type BypassFacts,
  bypassActions,
  bypassOffers,
  extendVerdict,
  extensionRoomHours,
  lapsesAt,
  requestVerdict,
} from '../../../../shared/domain/rules/bypasses.ts'
import type { BypassStatus } from '../../../../shared/schemas/bypasses.ts'
import { DEFAULT_SITE_POLICY, type SitePolicy } from '../../../../shared/schemas/sites.ts'
import type { Role } from '../../../../shared/schemas/users.ts'

// The bypass rule book (docs/bypasses.md#rules), state × role × policy. Role limits are the site policy's defaults:
// one shift of 12 h for shift supervisors and approvers, 72 h for the plant manager (common practice, no standard
// behind the numbers), a 4 h lapse of an authorization not put in force.

const SITE = 1
const REQUESTER = 100
const ME = 7
const NOW = new Date('2026-07-06T12:00:00Z')
const H = 3_600_000
const at = (h: number) => new Date(NOW.getTime() + h * H).toISOString()

function actor(roles: Role[], id = ME, site = SITE) {
  const user = { id, roles: roles.map((role) => ({ siteId: site, role })) }
  return { id, ability: createAppAbility(defineRulesFor(user)), rolesAtSite: roles }
}
const ctx = (policy: SitePolicy = DEFAULT_SITE_POLICY) => ({ policy, timeZone: 'Europe/Berlin', now: NOW })

function bypass(status: BypassStatus, o: Partial<BypassFacts> = {}): BypassFacts {
  const active = status === 'active' || status === 'removed'
  return {
    siteId: SITE,
    status,
    requestedById: REQUESTER,
    plannedStart: at(-2),
    plannedEnd: at(4),
    authorizedAt: status === 'requested' ? null : at(-3),
    activatedAt: active ? at(-2) : null,
    changeRequestId: null,
    limitTag: 'TSHH-101',
    limitMaxBypassHours: null,
    ...o,
  }
}

const ACTIONS: BypassAction[] = ['authorize', 'reject', 'extend', 'activate', 'remove', 'cancel']
const allowedOf = (b: BypassFacts, a: ReturnType<typeof actor>) => {
  const v = bypassActions(b, a, ctx())
  return ACTIONS.filter((k) => v[k].allowed)
}

describe('bypass rule book: who may do what in which state', () => {
  // [state, role, actions allowed] — the bypass is 6 h long, requested by someone else, its start 2 h ago
  const table: [BypassStatus, Role, BypassAction[]][] = [
    ['requested', 'shift_supervisor', ['authorize', 'reject', 'cancel']],
    ['requested', 'approver', ['authorize', 'reject', 'cancel']],
    ['requested', 'plant_manager', ['authorize', 'reject', 'cancel']],
    ['requested', 'operator', []],
    ['requested', 'technician', []],
    ['requested', 'safety_engineer', []],
    ['requested', 'auditor', []],
    ['requested', 'admin', []],
    ['authorized', 'shift_supervisor', ['extend', 'activate', 'cancel']],
    ['authorized', 'approver', ['extend', 'cancel']],
    ['authorized', 'operator', ['activate']],
    ['authorized', 'technician', ['activate']],
    ['authorized', 'plant_manager', ['extend', 'cancel']],
    ['authorized', 'auditor', []],
    ['active', 'shift_supervisor', ['extend', 'remove']],
    ['active', 'operator', ['remove']],
    ['active', 'technician', ['remove']],
    ['active', 'plant_manager', ['extend']],
    ['active', 'safety_engineer', []],
    ['removed', 'shift_supervisor', []],
    ['removed', 'plant_manager', []],
    ['rejected', 'shift_supervisor', []],
    ['cancelled', 'operator', []],
    ['lapsed', 'shift_supervisor', []],
  ]
  it.each(table)('%s, %s: %j', (status, role, allowed) => {
    expect(allowedOf(bypass(status), actor([role]))).toEqual(allowed)
  })

  it('the requester never authorizes, rejects or extends their own request, but may cancel it', () => {
    const mine = actor(['shift_supervisor'], REQUESTER)
    const v = bypassActions(bypass('requested'), mine, ctx())
    expect(v.authorize).toMatchObject({ allowed: false, status: 403 })
    expect(v.reject).toMatchObject({ allowed: false, status: 403 })
    expect(v.cancel.allowed).toBe(true)
    expect(extendVerdict(bypass('active'), mine, ctx(), 1)).toMatchObject({ allowed: false, status: 403 })
    // an operator's own request: cancel yes, nothing else
    expect(allowedOf(bypass('requested'), actor(['operator'], REQUESTER))).toEqual(['cancel'])
  })

  it('refusals carry the status the server answers: 403 for role, 409 for state', () => {
    expect(bypassActions(bypass('requested'), actor(['operator']), ctx()).authorize).toMatchObject({ status: 403 })
    expect(bypassActions(bypass('removed'), actor(['shift_supervisor']), ctx()).authorize).toMatchObject({
      status: 409,
    })
    expect(bypassActions(bypass('requested'), actor(['operator']), ctx()).activate).toMatchObject({ status: 409 })
  })

  it('nobody acts at a site where they hold no role', () => {
    const elsewhere = actor(['shift_supervisor', 'plant_manager', 'operator'], ME, 2)
    expect(allowedOf(bypass('requested'), elsewhere)).toEqual([])
    expect(allowedOf(bypass('active'), elsewhere)).toEqual([])
  })
})

describe('bypass rule book: the authorizer hour limit counts the whole duration since it was put in force', () => {
  // [roles, linked temporary change, max hours] with the default policy
  const limits: [Role[], boolean, number][] = [
    [['shift_supervisor'], false, 12],
    [['approver'], false, 12],
    [['plant_manager'], false, 72],
    [['plant_manager'], true, Number.POSITIVE_INFINITY],
    [['shift_supervisor'], true, 12],
    [['shift_supervisor', 'plant_manager'], false, 72],
    [['operator'], false, 0],
    [['technician', 'safety_engineer'], true, 0],
  ]
  it.each(limits)('%j with a linked change %s: %s h', (roles, linked, max) => {
    expect(authorizerMaxHours(roles, DEFAULT_SITE_POLICY, linked)).toBe(max)
  })

  it('a site policy moves the limits', () => {
    const policy = { ...DEFAULT_SITE_POLICY, bypassMaxHoursSupervisor: 8, bypassMaxHoursManager: 48 }
    expect(authorizerMaxHours(['approver'], policy, false)).toBe(8)
    expect(authorizerMaxHours(['plant_manager'], policy, false)).toBe(48)
  })

  // [planned hours, role, expected] for authorizing a requested bypass
  const authorize: [number, Role, boolean | number][] = [
    [12, 'shift_supervisor', true],
    [12.5, 'shift_supervisor', 403],
    [12.5, 'plant_manager', true],
    [72, 'plant_manager', true],
    [72.5, 'plant_manager', 422],
  ]
  it.each(authorize)('authorize %s h as %s: %s', (hours, role, expected) => {
    const b = bypass('requested', { plannedStart: at(1), plannedEnd: at(1 + hours) })
    const v = bypassActions(b, actor([role]), ctx()).authorize
    if (expected === true) expect(v).toEqual({ allowed: true })
    else expect(v).toMatchObject({ allowed: false, status: expected })
  })

  it('extensions add up: an 11.9 h bypass extended by a supervisor stops at 12 h in all and names the next role', () => {
    const b = bypass('active', { plannedStart: at(-2), activatedAt: at(-2), plannedEnd: at(9.9) })
    const sup = actor(['shift_supervisor'])
    expect(extendVerdict(b, sup, ctx(), 0.1)).toEqual({ allowed: true })
    const past = extendVerdict(b, sup, ctx(), 0.2)
    expect(past).toMatchObject({ allowed: false, status: 403 })
    expect(!past.allowed && past.reason).toContain('a plant manager')
    expect(extensionRoomHours(b, sup, ctx())).toBeCloseTo(0.1, 9)
    expect(extendVerdict(b, actor(['plant_manager']), ctx(), 60)).toEqual({ allowed: true })
    expect(extendVerdict(b, actor(['plant_manager']), ctx(), 60.2)).toMatchObject({ status: 422 })
  })

  it('a full bypass leaves the supervisor no room: the extend button is refused with the reason', () => {
    const full = bypass('active', { plannedStart: at(-2), activatedAt: at(-2), plannedEnd: at(10) })
    const v = extendVerdict(full, actor(['shift_supervisor']), ctx())
    expect(v).toMatchObject({ allowed: false, status: 403 })
    expect(!v.allowed && v.reason).toContain('a plant manager')
  })

  it('counts from the activation: put in force 2 h late, the planned 10 h is 8 h in force', () => {
    const b = bypass('active', { plannedStart: at(-4), activatedAt: at(-2), plannedEnd: at(6) })
    expect(extensionRoomHours(b, actor(['approver']), ctx())).toBeCloseTo(4, 9)
  })

  it("the limit's own maximum holds for everyone, the linked change included (422)", () => {
    const b = bypass('active', { limitMaxBypassHours: 8, changeRequestId: 5 })
    expect(extendVerdict(b, actor(['plant_manager']), ctx(), 2)).toEqual({ allowed: true })
    const v = extendVerdict(b, actor(['plant_manager']), ctx(), 2.5)
    expect(v).toMatchObject({ allowed: false, status: 422 })
    expect(!v.allowed && v.reason).toContain('8 h')
  })

  it('with a linked temporary change the plant manager signs beyond 72 h; the supervisor stays at 12 h', () => {
    const b = bypass('requested', { plannedStart: at(1), plannedEnd: at(101), changeRequestId: 9 })
    expect(bypassActions(b, actor(['plant_manager']), ctx()).authorize).toEqual({ allowed: true })
    expect(bypassActions(b, actor(['shift_supervisor']), ctx()).authorize).toMatchObject({ status: 403 })
  })
})

describe('bypass rule book: the authorized window', () => {
  const op = actor(['operator'])
  it('refuses activation before the planned start with the time in the site zone (409)', () => {
    const b = bypass('authorized', { plannedStart: at(3), plannedEnd: at(7), authorizedAt: at(-1) })
    const v = activateVerdict(b, op, ctx())
    expect(v).toMatchObject({ allowed: false, status: 409 })
    // 15:00 UTC on 6 July is 17:00 in Berlin (CEST, UTC+2)
    expect(!v.allowed && v.reason).toContain('17:00 CEST')
    expect(activateVerdict(b, op, { ...ctx(), timeZone: 'America/Chicago' })).toMatchObject({
      reason: expect.stringContaining('10:00 GMT-5 (America/Chicago)'),
    })
    expect(activateVerdict(b, op, { ...ctx(), now: new Date(at(3)) })).toEqual({ allowed: true })
  })

  it('the authorization lapses 4 h after the later of its signature and the planned start', () => {
    const b = bypass('authorized', { plannedStart: at(3), plannedEnd: at(10), authorizedAt: at(-1) })
    expect(lapsesAt(b, DEFAULT_SITE_POLICY)?.toISOString()).toBe(at(7))
    expect(activateVerdict(b, op, { ...ctx(), now: new Date(at(7)) })).toEqual({ allowed: true })
    expect(activateVerdict(b, op, { ...ctx(), now: new Date(at(7.01)) })).toMatchObject({ status: 409 })
    const signedLate = bypass('authorized', { plannedStart: at(-2), plannedEnd: at(10), authorizedAt: at(-1) })
    expect(lapsesAt(signedLate, DEFAULT_SITE_POLICY)?.toISOString()).toBe(at(3))
    expect(lapsesAt(bypass('active'), DEFAULT_SITE_POLICY)).toBeNull()
  })

  it('never after the planned end', () => {
    const b = bypass('authorized', { plannedStart: at(-3), plannedEnd: at(-0.5), authorizedAt: at(-3) })
    expect(activateVerdict(b, op, ctx())).toMatchObject({ allowed: false, status: 409 })
  })
})

describe('bypass rule book: requests', () => {
  const limit = { siteId: SITE, tag: 'TSHH-101', status: 'active', bypassPermitted: true }
  const table: [Role, string, boolean, true | number][] = [
    ['operator', 'active', true, true],
    ['technician', 'active', true, true],
    ['shift_supervisor', 'active', true, true],
    ['safety_engineer', 'active', true, true],
    ['approver', 'active', true, 403],
    ['plant_manager', 'active', true, 403],
    ['auditor', 'active', true, 403],
    ['operator', 'proposed', true, 409],
    ['operator', 'retired', true, 409],
    ['operator', 'active', false, 422],
  ]
  it.each(table)('%s, limit %s, bypass permitted %s: %s', (role, status, bypassPermitted, expected) => {
    const v = requestVerdict({ ...limit, status, bypassPermitted }, actor([role]))
    if (expected === true) expect(v).toEqual({ allowed: true })
    else expect(v).toMatchObject({ allowed: false, status: expected })
  })
})

describe('bypass rule book: what a screen offers', () => {
  it('offers an action where it applies and the actor holds the right; disabled with the reason when refused', () => {
    const early = bypass('authorized', { plannedStart: at(3), plannedEnd: at(7), authorizedAt: at(-1) })
    const op = bypassOffers(early, actor(['operator']), ctx())
    expect(op.activate.offered).toBe(true)
    expect(op.activate.verdict).toMatchObject({ allowed: false, status: 409 })
    expect(op.authorize.offered).toBe(false)
    expect(op.extend.offered).toBe(false)
    // the requester's own request: authorize is offered to a supervisor-requester but refused with the reason
    const own = bypassOffers(bypass('requested'), actor(['shift_supervisor'], REQUESTER), ctx())
    expect(own.authorize).toMatchObject({ offered: true, verdict: { allowed: false, status: 403 } })
    expect(own.cancel).toMatchObject({ offered: true, verdict: { allowed: true } })
    // an operator's own request may be cancelled by them
    expect(bypassOffers(bypass('requested'), actor(['operator'], REQUESTER), ctx()).cancel.offered).toBe(true)
    // nothing is offered on a finished bypass
    const done = bypassOffers(bypass('removed'), actor(['shift_supervisor', 'plant_manager']), ctx())
    expect(Object.values(done).some((o) => o.offered)).toBe(false)
  })
})

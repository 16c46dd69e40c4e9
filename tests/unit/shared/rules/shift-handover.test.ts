import { describe, expect, it } from 'vitest'
import { createAppAbility, defineRulesFor } from '../../../../shared/abilities/index.ts'
import { acceptVerdict, type HandoverFacts, handOverVerdict } from '../../../../shared/domain/rules/shift-handover.ts'
import type { ShiftHandoverStatus } from '../../../../shared/schemas/shift-handover.ts'
import type { Role } from '../../../../shared/schemas/users.ts'

// The shift handover rule book (docs/shift-handover.md#rules): the outgoing shift supervisor hands over, another shift
// supervisor of the site accepts, while the state is still the one handed over. Two signatures over one content hash
// is common practice for a handover of safety-critical state (shift handover logs are signed by both shifts).

const SITE = 1
const OUTGOING = 10
const INCOMING = 11
const HASH = 'c'.repeat(64)

function actor(roles: Role[], id = INCOMING, site = SITE) {
  return { id, ability: createAppAbility(defineRulesFor({ id, roles: roles.map((role) => ({ siteId: site, role })) })) }
}
const handover = (status: ShiftHandoverStatus, o: Partial<HandoverFacts> = {}): HandoverFacts => ({
  siteId: SITE,
  status,
  handedOverById: OUTGOING,
  contentHash: HASH,
  stateUnchanged: true,
  ...o,
})

describe('shift handover rule book: handing over', () => {
  const roles: [Role, true | number][] = [
    ['shift_supervisor', true],
    ['operator', 403],
    ['plant_manager', 403],
    ['safety_engineer', 403],
    ['technician', 403],
    ['approver', 403],
    ['auditor', 403],
    ['admin', 403],
  ]
  it.each(roles)('%s: %s', (role, expected) => {
    const v = handOverVerdict({ siteId: SITE }, actor([role], OUTGOING))
    if (expected === true) expect(v).toEqual({ allowed: true })
    else expect(v).toMatchObject({ allowed: false, status: expected })
  })
  it('only what was shown: a state that changed since it was shown is refused (409)', () => {
    const sup = actor(['shift_supervisor'], OUTGOING)
    expect(handOverVerdict({ siteId: SITE }, sup, { shownHash: HASH, liveHash: HASH })).toEqual({ allowed: true })
    expect(handOverVerdict({ siteId: SITE }, sup, { shownHash: HASH, liveHash: 'd'.repeat(64) })).toMatchObject({
      status: 409,
    })
  })
  it('not at another site', () => {
    expect(handOverVerdict({ siteId: SITE }, actor(['shift_supervisor'], OUTGOING, 2)).allowed).toBe(false)
  })
})

describe('shift handover rule book: accepting', () => {
  // [status, role, actor, state unchanged, expected]
  const table: [ShiftHandoverStatus, Role, number, boolean, true | number][] = [
    ['handed_over', 'shift_supervisor', INCOMING, true, true],
    ['handed_over', 'shift_supervisor', OUTGOING, true, 403],
    ['handed_over', 'operator', INCOMING, true, 403],
    ['handed_over', 'plant_manager', INCOMING, true, 403],
    ['handed_over', 'shift_supervisor', INCOMING, false, 409],
    ['accepted', 'shift_supervisor', INCOMING, true, 409],
    ['superseded', 'shift_supervisor', INCOMING, true, 409],
  ]
  it.each(table)('%s, %s (user %s), state unchanged %s: %s', (status, role, id, unchanged, expected) => {
    const v = acceptVerdict(handover(status, { stateUnchanged: unchanged }), actor([role], id))
    if (expected === true) expect(v).toEqual({ allowed: true })
    else expect(v).toMatchObject({ allowed: false, status: expected })
  })
  it('the content hash the incoming supervisor was shown must be the one handed over', () => {
    const sup = actor(['shift_supervisor'])
    expect(acceptVerdict(handover('handed_over'), sup, HASH)).toEqual({ allowed: true })
    expect(acceptVerdict(handover('handed_over'), sup, 'e'.repeat(64))).toMatchObject({ status: 409 })
  })
})

import { createAppAbility, defineRulesFor } from '../../../../shared/abilities/index.ts'
import type { ChangeRuleRecord } from '../../../../shared/domain/rules/change-requests.ts'
import { IMPACT_CHECKLIST } from '../../../../shared/schemas/change-requests.ts'
import type { Role } from '../../../../shared/schemas/users.ts'

// What the change-request rule book tests (change-requests.test.ts, change-request-reviews.test.ts) build their
// records and actors from: the people each file's tables name and a request of the site with every field written out.

export const NOW = new Date('2026-06-01T10:00:00Z')
export const SITE = 1

type People = Record<string, { id: number; roles: Role[] }>

/** The people both tables name, with their ids and roles at the site; each file adds its own. */
export const COMMON_PEOPLE = {
  engineer: { id: 1, roles: ['safety_engineer'] },
  engineer2: { id: 9, roles: ['safety_engineer'] },
  approver: { id: 2, roles: ['approver'] },
  technician: { id: 3, roles: ['technician'] },
  supervisor: { id: 4, roles: ['shift_supervisor'] },
  operator: { id: 5, roles: ['operator'] },
  control: { id: 6, roles: ['control_engineer'] },
  auditor: { id: 7, roles: ['auditor'] },
} satisfies People

/**
 * The rule book's actor for each person of `people`: the roles at the site, with the CASL ability built from them;
 * `elsewhere` holds `elsewhereRoles` at site 2 only.
 */
export function actorsOf(people: People, elsewhereRoles: Role[]) {
  return (who: keyof typeof people) => {
    const p = people[who]
    const roles = p.roles.map((role) => ({ siteId: SITE, role }))
    if (who === 'elsewhere') roles.push(...elsewhereRoles.map((role) => ({ siteId: 2, role })))
    return { id: p.id, ability: createAppAbility(defineRulesFor({ id: p.id, roles })) }
  }
}

/** The impact checklist with none, the before-implementation group, or all of its items done. */
export const checklist = (done: 'none' | 'before' | 'all') =>
  IMPACT_CHECKLIST.map((c) => ({
    item: c.item,
    label: c.label,
    group: c.group,
    doneAt: done === 'all' || (done === 'before' && c.group === 'before') ? '2026-05-30T10:00:00Z' : null,
  }))

export const sig = (userId: number, meaning: string, voided = false) => ({ userId, meaning, voided })

/** A permanent draft request of the site by person 1, one modify item, nothing signed or done, with `over` over it. */
export function changeRecord(over: Partial<ChangeRuleRecord>): ChangeRuleRecord {
  return {
    siteId: SITE,
    type: 'permanent',
    status: 'draft',
    proposerId: 1,
    editorIds: [],
    approvedAt: null,
    approvalExpiresAt: null,
    expiresAt: null,
    reversals: [],
    items: [{ id: 11, kind: 'modify', implementedAt: null, stale: false }],
    signatures: [],
    checklist: checklist('none'),
    ...over,
  }
}

import { subject } from '@casl/ability'
import { describe, expect, it } from 'vitest'
import { auditReadScope, createAppAbility, defineRulesFor } from '../../../shared/abilities/index.ts'
import type { Role } from '../../../shared/schemas/users.ts'

// Whose audit events a reader sees, by role and site: the table of docs/security.md, "Whose events a reader sees".
describe('the audit trail a user reads', () => {
  const user = (...roles: [Role, number][]) => ({ id: 7, roles: roles.map(([role, siteId]) => ({ role, siteId })) })
  it.each([
    ['an auditor at site 1', user(['auditor', 1]), [1], false],
    ['a plant manager at sites 1 and 2', user(['plant_manager', 1], ['plant_manager', 2]), [1, 2], false],
    ['an administrator of site 2', user(['admin', 2]), [2], true],
    ['an auditor at 1 and administrator of 3', user(['auditor', 1], ['admin', 3]), [1, 3], true],
    ['a safety engineer and approver at 1', user(['safety_engineer', 1], ['approver', 1]), [], false],
    ['an operator at 1, auditor at 2', user(['operator', 1], ['auditor', 2]), [2], false],
    ['someone without roles', user(), [], false],
  ] as const)('%s', (_name, u, siteIds, installationWide) => {
    expect(auditReadScope(u)).toEqual({ siteIds, installationWide })
    // the CASL rule carries the same sites
    const ability = createAppAbility(defineRulesFor(u))
    for (const siteId of [1, 2, 3]) {
      const fields: Record<string, unknown> = { siteId }
      expect(ability.can('read', subject('AuditEvent', fields))).toBe((siteIds as readonly number[]).includes(siteId))
    }
  })
  it('reads nothing signed out', () => {
    expect(auditReadScope(null)).toEqual({ siteIds: [], installationWide: false })
  })
})

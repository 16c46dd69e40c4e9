import { sql } from 'kysely'
import { describe, expect, it } from 'vitest'
import { resolveAuditSites } from '../../server/features/audit/audit.repository.ts'
import { AUDIT_ENTITY_SITE, type AuditEntityType } from '../../server/features/audit/audit.sites.ts'
import { useTestDb } from './helpers/test-db.ts'

// docs/security.md, "Whose events a reader sees": every event about a site-bound record carries that record's site.
const ctx = useTestDb({ register: true })

describe('the site of an audit event', () => {
  it('is filled for every event the demo register wrote about a site-bound record', async () => {
    const rows = await ctx.db
      .selectFrom('audit_event')
      .select(['entity_type', sql<number>`count(*) filter (where site_id is null)::int`.as('siteless')])
      .groupBy('entity_type')
      .execute()
    const byType = Object.fromEntries(rows.map((r) => [r.entity_type, r.siteless]))
    expect(Object.keys(byType)).toEqual(expect.arrayContaining(['Limit', 'Process']))
    for (const [type, siteless] of Object.entries(byType))
      if (AUDIT_ENTITY_SITE[type as AuditEntityType] !== null) expect({ type, siteless }).toEqual({ type, siteless: 0 })
  })

  it("is read from each entity type's own table", async () => {
    let checked = 0
    for (const [type, table] of Object.entries(AUDIT_ENTITY_SITE) as [AuditEntityType, string | null][]) {
      if (table === null || table === 'self') continue
      const row = await sql<{ id: number; site_id: number }>`SELECT id, site_id FROM ${sql.table(table)} LIMIT 1`
        .execute(ctx.db)
        .then((r) => r.rows[0])
      if (!row) continue
      const [site] = await resolveAuditSites(ctx.db, [{ entityType: type, entityId: String(row.id) }])
      expect({ type, site }).toEqual({ type, site: row.site_id })
      checked++
    }
    // the demo register holds areas, processes, instruments, limits and more
    expect(checked).toBeGreaterThanOrEqual(4)
  })

  it('falls back to the siteId of the recorded state when the record is gone, and is null for accounts', async () => {
    const sites = await resolveAuditSites(ctx.db, [
      { entityType: 'Limit', entityId: '2147483000', before: { siteId: 7 } },
      { entityType: 'Limit', entityId: 'not-a-number', after: { siteId: 8 } },
      { entityType: 'User', entityId: '1', after: { siteId: 9 } },
      { entityType: 'Site', entityId: '5' },
    ])
    expect(sites).toEqual([7, 8, null, 5])
  })
})

import { describe, expect, it } from 'vitest'
import type { RouteRecordRaw } from 'vue-router'
import { AUDIT_ENTITY_LABELS } from '@shared/schemas/audit.ts'
import { entityLink } from '@/features/audit/format'
import type { AuditEvent } from '@/features/audit/api'
import { routes } from '@/router/routes'

// The link of an audit event to the page of its record (src/features/audit/format.ts): the record's own page where it
// has one, its limit's page for deferrals and alarm states, else the list that shows that kind of record.
const event = (entityType: string, entityId: string | null, entityLimitId: number | null = null) =>
  ({ entityType, entityId, entityLimitId }) as AuditEvent

const routeNames = (list: RouteRecordRaw[]): string[] =>
  list.flatMap((r) => [...(typeof r.name === 'string' ? [r.name] : []), ...routeNames(r.children ?? [])])

describe('entityLink', () => {
  it('opens the page of a record that has one, with its id', () => {
    expect(entityLink(event('Limit', '42'))).toEqual({ name: 'limit-detail', params: { id: '42' } })
    expect(entityLink(event('ChangeRequest', '7'))).toEqual({ name: 'change-detail', params: { id: '7' } })
    expect(entityLink(event('TripTest', '3'))).toEqual({ name: 'test-detail', params: { id: '3' } })
    expect(entityLink(event('Bypass', '5'))).toEqual({ name: 'bypass-detail', params: { id: '5' } })
    expect(entityLink(event('Demand', '9'))).toEqual({ name: 'demand-detail', params: { id: '9' } })
    expect(entityLink(event('Finding', '11'))).toEqual({ name: 'finding-detail', params: { id: '11' } })
    expect(entityLink(event('ReconciliationSource', '2'))).toEqual({
      name: 'recon-source-detail',
      params: { id: '2' },
    })
  })

  it("opens the limit's page for a deferral or an alarm state, and nothing without a limit", () => {
    expect(entityLink(event('TestDeferral', '8', 42))).toEqual({ name: 'limit-detail', params: { id: '42' } })
    expect(entityLink(event('alarm_state', '8', 17))).toEqual({ name: 'limit-detail', params: { id: '17' } })
    expect(entityLink(event('TestDeferral', '8'))).toBeNull()
  })

  it('opens the list of a kind of record without a page of its own', () => {
    expect(entityLink(event('Instrument', '4'))).toEqual({ name: 'instrument-list' })
    expect(entityLink(event('Process', '4'))).toEqual({ name: 'process-list' })
    expect(entityLink(event('ReconciliationRun', '4'))).toEqual({ name: 'recon-run-list' })
    expect(entityLink(event('alarm_journal_upload', '4'))).toEqual({ name: 'alarm-journals' })
    expect(entityLink(event('User', '4'))).toEqual({ name: 'admin-users' })
    expect(entityLink(event('Site', '4'))).toEqual({ name: 'admin-sites' })
    expect(entityLink(event('Area', '4'))).toEqual({ name: 'admin-sites' })
  })

  it('links nothing without a numeric id, or for a kind with no page', () => {
    expect(entityLink(event('Limit', null))).toBeNull()
    expect(entityLink(event('Limit', 'abc'))).toBeNull()
    expect(entityLink(event('System', '1'))).toBeNull()
    expect(entityLink(event('ShiftHandover', '1'))).toBeNull()
    expect(entityLink(event('constructor', '1'))).toBeNull()
  })

  it('names only routes the app has', () => {
    const names = new Set(routeNames(routes))
    for (const kind of Object.keys(AUDIT_ENTITY_LABELS)) {
      const link = entityLink(event(kind, '1', 1))
      if (link && typeof link === 'object' && 'name' in link) expect(names, kind).toContain(link.name)
    }
  })
})

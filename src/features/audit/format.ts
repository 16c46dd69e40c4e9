import type { RouteLocationRaw } from 'vue-router'
import { AUDIT_ENTITY_LABELS } from '@shared/schemas/audit.ts'
import type { AuditEvent } from './api'

/** The reader's own time zone (the browser's), in which the audit trail shows times and reads its date filters. */
export function userTimeZone(): string {
  try {
    return Intl.DateTimeFormat().resolvedOptions().timeZone || 'UTC'
  } catch {
    return 'UTC'
  }
}

/** The instant a calendar day (`YYYY-MM-DD`) begins in the reader's time zone; `days` later for an exclusive end. */
export function dayStart(day: string, days = 0): string | undefined {
  const m = /^(\d{4})-(\d{2})-(\d{2})$/.exec(day)
  if (!m) return undefined
  const d = new Date(Number(m[1]), Number(m[2]) - 1, Number(m[3]) + days)
  return Number.isNaN(d.getTime()) ? undefined : d.toISOString()
}

/** What kind of record an event names, in words. */
export function entityKind(e: Pick<AuditEvent, 'entityType'>): string {
  return AUDIT_ENTITY_LABELS[e.entityType] ?? e.entityType
}

/** The page of the record an event names, where it has one. */
export function entityLink(e: AuditEvent): RouteLocationRaw | null {
  const id = e.entityId
  if (id === null || !/^\d+$/.test(id)) return null
  switch (e.entityType) {
    case 'Limit':
      return { name: 'limit-detail', params: { id } }
    case 'ChangeRequest':
      return { name: 'change-detail', params: { id } }
    case 'TripTest':
      return { name: 'test-detail', params: { id } }
    case 'Bypass':
      return { name: 'bypass-detail', params: { id } }
    case 'Demand':
      return { name: 'demand-detail', params: { id } }
    case 'Finding':
      return { name: 'finding-detail', params: { id } }
    case 'ReconciliationSource':
      return { name: 'recon-source-detail', params: { id } }
    case 'TestDeferral':
    case 'alarm_state':
      return e.entityLimitId ? { name: 'limit-detail', params: { id: String(e.entityLimitId) } } : null
    case 'Instrument':
      return { name: 'instrument-list' }
    case 'Process':
      return { name: 'process-list' }
    case 'ReconciliationRun':
      return { name: 'recon-run-list' }
    case 'alarm_journal_upload':
      return { name: 'alarm-journals' }
    case 'User':
      return { name: 'admin-users' }
    case 'Site':
    case 'Area':
      return { name: 'admin-sites' }
    default:
      return null
  }
}

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

/** The kinds of record with a page of their own, and that page (it takes the event's record id). */
const RECORD_PAGES = new Map([
  ['Limit', 'limit-detail'],
  ['ChangeRequest', 'change-detail'],
  ['TripTest', 'test-detail'],
  ['Bypass', 'bypass-detail'],
  ['Demand', 'demand-detail'],
  ['Finding', 'finding-detail'],
  ['ReconciliationSource', 'recon-source-detail'],
])

/** The kinds of record shown on the page of their limit. */
const ON_LIMIT_PAGE = new Set(['TestDeferral', 'alarm_state'])

/** The kinds of record without a page of their own, and the list that shows them. */
const LIST_PAGES = new Map([
  ['Instrument', 'instrument-list'],
  ['Process', 'process-list'],
  ['ReconciliationRun', 'recon-run-list'],
  ['alarm_journal_upload', 'alarm-journals'],
  ['User', 'admin-users'],
  ['Site', 'admin-sites'],
  ['Area', 'admin-sites'],
])

/** The page of the record an event names, where it has one. */
export function entityLink(e: AuditEvent): RouteLocationRaw | null {
  const id = e.entityId
  if (id === null || !/^\d+$/.test(id)) return null
  const page = RECORD_PAGES.get(e.entityType)
  if (page) return { name: page, params: { id } }
  if (ON_LIMIT_PAGE.has(e.entityType)) {
    return e.entityLimitId ? { name: 'limit-detail', params: { id: String(e.entityLimitId) } } : null
  }
  const list = LIST_PAGES.get(e.entityType)
  return list ? { name: list } : null
}

import type {
  AuditEventDto,
  AuditEventList,
  AuditFilters,
  AuditListQuery,
  AuditVerifyDto,
} from '@shared/schemas/audit.ts'
import { http, toQuery } from '@/api/client'

export type AuditEvent = AuditEventDto
export type { AuditFilters }

/** Cache keys of the audit trail (Pinia Colada). */
export const auditKeys = {
  all: ['audit-events'] as const,
  list: (q: AuditListQuery) => ['audit-events', 'list', JSON.stringify(q)] as const,
}

export const listAuditEvents = (query: AuditListQuery) => http.get<AuditEventList>('/audit-events', { ...query })

/** The CSV of the filtered events, with a column of times in `timeZone`. */
export const auditExportUrl = (filters: AuditFilters, timeZone: string) =>
  `/api/audit-events/export.csv${toQuery({ ...filters, tz: timeZone })}`

/** Runs the chain verifier on the server. */
export const verifyAuditTrail = () => http.post<AuditVerifyDto>('/audit-events/verify')

import { http, toQuery } from '@/api/client'
import type { AuditEventDto, AuditVerifyDto } from '@shared/schemas/audit.ts'

export type AuditEvent = AuditEventDto

/** The filters of the list and its export; `from` and `to` are instants (`to` exclusive). */
export interface AuditFilters {
  q?: string
  entityType?: string
  entityId?: string
  action?: string
  siteId?: number
  from?: string
  to?: string
}

export const listAuditEvents = (query: AuditFilters & { page: number; pageSize: number }) =>
  http.get<{ items: AuditEvent[]; total: number }>('/audit-events', { ...query })

/** The CSV of the filtered events, with a column of times in `timeZone`. */
export const auditExportUrl = (filters: AuditFilters, timeZone: string) =>
  `/api/audit-events/export.csv${toQuery({ ...filters, tz: timeZone })}`

/** Runs the chain verifier on the server. */
export const verifyAuditTrail = () => http.post<AuditVerifyDto>('/audit-events/verify')

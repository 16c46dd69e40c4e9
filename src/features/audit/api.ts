import { http } from '@/api/client'

export interface AuditEvent {
  id: number
  at: string
  actorId: number | null
  actorName: string | null
  action: string
  entityType: string
  entityId: string | null
  before: unknown
  after: unknown
  reason: string | null
  batchId: string | null
  requestId: string | null
  ip: string | null
  prevHash: string
  hash: string
}
export interface AuditQuery {
  page: number
  pageSize: number
  q?: string
  entityType?: string
  entityId?: string
  action?: string
  from?: string
  to?: string
}

export const listAuditEvents = (query: AuditQuery) =>
  http.get<{ items: AuditEvent[]; total: number }>('/audit-events', { ...query })

import type {
  ChangeRequestDto,
  Discipline,
  ChangeStatus,
  CHANGE_TYPES,
  ChecklistItem,
  ReadBackComparison,
} from '@shared/schemas/change-requests.ts'
import type { ListResult } from '@shared/schemas/common.ts'
import type { Instrument, Limit } from '@shared/schemas/register.ts'
import { api, http, uploadWithProgress } from '@/api/client'

export type ChangeType = (typeof CHANGE_TYPES)[number]

/** Cache keys of change requests (Pinia Colada): a write to a request invalidates them all. */
export const changeRequestKeys = {
  all: ['change-requests'] as const,
  /** the requests touching a limit, for the limit page */
  limit: (limitId: number) => ['change-requests', 'limit', limitId] as const,
}
export type ChangeView = 'waiting' | 'mine' | 'all'

/** One row of the change list. */
export interface ChangeListItem {
  id: number
  title: string
  type: ChangeType
  status: ChangeStatus
  siteId: number
  siteCode: string
  proposerName: string
  itemCount: number
  approvalsRequired: number
  approvalsHeld: number
  updatedAt: string
  expiresAt: string | null
  emergencyFlagged: boolean
}

export interface ChangeListQuery {
  view: ChangeView
  status?: string[]
  type?: string[]
  siteId?: number[]
  /** requests with an item on this limit or on an instrument it reads */
  limitId?: number
  /** only temporary changes expired and not reverted */
  expiredTemporary?: 'true'
  q?: string
  page: number
  pageSize: number
}

/** An item as the form sends it. */
export type ChangeItemBody =
  | { kind: 'create'; limitId: number }
  | { kind: 'modify'; limitId: number; changes: Record<string, unknown> }
  | { kind: 'retire'; limitId: number }
  | { kind: 'instrument'; instrumentId: number; changes: Record<string, unknown> }

export interface ChangeRequestBody {
  type: ChangeType
  title: string
  rationale: string
  hazardReference: string
  expiresAt: string | null
  items: ChangeItemBody[]
  /** the temporary change this request reverses (on creation only) */
  reversesId?: number | null
  /** the change proposal this request develops (on creation only) */
  proposalId?: number | null
}

/** An audit event of the request's timeline (readable by auditors, administrators and plant managers). */
export interface ChangeAuditEvent {
  id: number
  at: string
  actorName: string | null
  action: string
  after: unknown
}

export type InstrumentRecord = Instrument & { revision: number }

export const listChangeRequests = (query: ChangeListQuery) =>
  http.get<ListResult<ChangeListItem>>('/change-requests', { ...query })
export const getWaitingCount = () => http.get<{ count: number }>('/change-requests/waiting-count')
export const getChangeRequest = (id: number) => http.get<ChangeRequestDto>(`/change-requests/${id}`)
export const createChangeRequest = (body: ChangeRequestBody & { siteId: number }) =>
  http.post<ChangeRequestDto>('/change-requests', body)
export const updateChangeRequest = (id: number, body: ChangeRequestBody & { version: number }) =>
  http.patch<ChangeRequestDto>(`/change-requests/${id}`, body)
export const submitChangeRequest = (id: number) => http.post<ChangeRequestDto>(`/change-requests/${id}/submission`)
export const withdrawChangeRequest = (id: number) => http.post<ChangeRequestDto>(`/change-requests/${id}/withdrawal`)
export const approveChangeRequest = (id: number, password: string, comment: string) =>
  http.post<ChangeRequestDto>(`/change-requests/${id}/approvals`, { password, comment })
/** Signs a discipline review of the request (docs/change-requests.md#discipline-reviews). */
export const reviewChangeRequest = (id: number, discipline: Discipline, password: string, comment: string) =>
  http.post<ChangeRequestDto>(`/change-requests/${id}/reviews`, { discipline, password, comment })
export const rejectChangeRequest = (id: number, password: string, comment: string) =>
  http.post<ChangeRequestDto>(`/change-requests/${id}/rejections`, { password, comment })
export const implementChangeItem = (
  id: number,
  itemId: number,
  readBack: Record<string, unknown>,
  password: string,
  comment: string,
) => http.post<ChangeRequestDto>(`/change-requests/${id}/implementations`, { itemId, readBack, password, comment })
/** Compares a read-back with the approved values of one item; implements nothing. */
export const checkReadBack = (id: number, itemId: number, readBack: Record<string, unknown>) =>
  http.post<ReadBackComparison>(`/change-requests/${id}/read-back-checks`, { itemId, readBack })
export const implementAllItems = (id: number, password: string, comment: string) =>
  http.post<ChangeRequestDto>(`/change-requests/${id}/implementations`, {
    allItems: true,
    deviceListConfirmed: true,
    password,
    comment,
  })
export const closeChangeRequest = (
  id: number,
  password: string,
  pssr: { reference: string; findings: string; readyForService: boolean },
) => http.post<ChangeRequestDto>(`/change-requests/${id}/closure`, { password, pssr })
export const tickChecklistItem = (
  id: number,
  item: ChecklistItem | string,
  done: boolean,
  note = '',
  notApplicable = false,
) => api<ChangeRequestDto>('PUT', `/change-requests/${id}/checklist/${item}`, { done, note, notApplicable })
export const listChangeAuditEvents = (id: number) =>
  http.get<ListResult<ChangeAuditEvent>>('/audit-events', {
    entityType: 'ChangeRequest',
    entityId: String(id),
    pageSize: 200,
  })

/** Address of the request's PDF print. */
export const changeRequestPdfUrl = (id: number) => `/api/change-requests/${id}/pdf`
/** Address of one attachment (a download). */
export const attachmentUrl = (id: number, attachmentId: number) =>
  `/api/change-requests/${id}/attachments/${attachmentId}`

/** Uploads an attachment and reports the upload's progress (0…1). */
export function uploadAttachment(
  id: number,
  file: File,
  onProgress: (fraction: number) => void,
): Promise<{ id: number; fileName: string }> {
  const form = new FormData()
  form.append('file', file)
  return uploadWithProgress(`/change-requests/${id}/attachments`, form, onProgress)
}

// The register's records, as the change form and the request page need them.
export const listLimitsForChange = (query: { siteId: number; status: 'proposed' | 'active'; q?: string }) =>
  http.get<{ items: Limit[]; total: number }>('/limits', {
    siteId: [query.siteId],
    status: [query.status],
    q: query.q,
    pageSize: 100,
    sort: 'tag',
  })
/** The limits reading an instrument, for the other limits drawn on an item's operating-window charts. */
export const listLimitsOnInstrument = (instrumentId: number) =>
  http.get<ListResult<Limit>>('/limits', { instrumentId: [instrumentId], pageSize: 200, sort: 'setpoint' })
export const listInstrumentsForChange = (query: { siteId: number; q?: string }) =>
  http.get<ListResult<InstrumentRecord>>('/instruments', { siteId: [query.siteId], q: query.q, pageSize: 100 })
export { getInstrument, getLimit } from '@/features/register/api'

import type { AuditEventDto, AuditListQuery } from '@shared/schemas/audit.ts'
import type {
  ChangeItemInput,
  ChangeList,
  ChangeListItem,
  ChangeListParams,
  ChangeRequestBody,
  ChangeRequestDto,
  ChangeRequestPatch,
  ChangeType,
  ChangeView,
  CreateChangeRequestBody,
  Discipline,
  ChecklistItem,
  ReadBackComparison,
} from '@shared/schemas/change-requests.ts'
import type { ListResult } from '@shared/schemas/common.ts'
import type { Instrument, Limit } from '@shared/schemas/register.ts'
import { api, http } from '@/api/client'

export type { ChangeListItem, ChangeRequestBody, ChangeType, ChangeView }

/** Cache keys of change requests (Pinia Colada): a write to a request invalidates them all. */
export const changeRequestKeys = {
  all: ['change-requests'] as const,
  /** the requests touching a limit, for the limit page */
  limit: (limitId: number) => ['change-requests', 'limit', limitId] as const,
  list: (q: ChangeListQuery) => ['change-requests', 'list', JSON.stringify(q)] as const,
  one: (id: number) => ['change-requests', id] as const,
}
/** An item as the form sends it. */
export type ChangeItemBody = ChangeItemInput

/** An audit event of the request's timeline (readable by auditors, administrators and plant managers). */
export type ChangeAuditEvent = Pick<AuditEventDto, 'id' | 'at' | 'actorName' | 'action' | 'after'>

export type InstrumentRecord = Instrument & { revision: number }

/** The list's query; `status` and `type` may be the URL's text as the list view read it (the server checks them). */
export type ChangeListQuery = Omit<ChangeListParams, 'status' | 'type'> & { status?: string[]; type?: string[] }
export const listChangeRequests = (query: ChangeListQuery) => http.get<ChangeList>('/change-requests', { ...query })
export const getWaitingCount = () => http.get<{ count: number }>('/change-requests/waiting-count')
export const getChangeRequest = (id: number) => http.get<ChangeRequestDto>(`/change-requests/${id}`)
export const createChangeRequest = (body: CreateChangeRequestBody) =>
  http.post<ChangeRequestDto>('/change-requests', body)
export const updateChangeRequest = (id: number, body: ChangeRequestPatch) =>
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
  } satisfies AuditListQuery)

/** Address of the request's PDF print. */
export const changeRequestPdfUrl = (id: number) => `/api/change-requests/${id}/pdf`

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

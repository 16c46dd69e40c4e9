import type {
  AuthorizeBypassInput,
  BypassDto,
  BypassFilters,
  BypassListQuery,
  BypassReviewDto,
  CreateBypassBody,
  RejectBypassInput,
  RemoveBypassInput,
  RiskErosion,
  RiskErosionQuery,
} from '@shared/schemas/bypasses.ts'
import type { ListResult } from '@shared/schemas/common.ts'
import { http, toQuery } from '@/api/client'

export type { BypassFilters, RiskErosion, RiskRow } from '@shared/schemas/bypasses.ts'

/** A temporary change request a long bypass may be linked to. */
export interface TemporaryChange {
  id: number
  title: string
  status: string
  siteId: number
  expiresAt: string | null
}

/** Cache keys of the bypass data (Pinia Colada). */
export const bypassKeys = {
  all: ['bypasses'] as const,
  one: (id: number) => ['bypasses', id] as const,
  list: (q: BypassListQuery) => ['bypasses', 'list', JSON.stringify(q)] as const,
  review: (q: BypassFilters) => ['bypasses', 'review', JSON.stringify(q)] as const,
  risk: (q: RiskErosionQuery) => ['bypasses', 'risk', JSON.stringify(q)] as const,
}

export const listBypasses = (query: BypassListQuery) => http.get<ListResult<BypassDto>>('/bypasses', { ...query })
export const getBypass = (id: number) => http.get<BypassDto>(`/bypasses/${id}`)
export const requestBypass = (body: CreateBypassBody) => http.post<BypassDto>('/bypasses', body)
export const authorizeBypass = (id: number, body: AuthorizeBypassInput) =>
  http.post<BypassDto>(`/bypasses/${id}/authorizations`, body)
export const rejectBypass = (id: number, body: RejectBypassInput) =>
  http.post<BypassDto>(`/bypasses/${id}/rejections`, body)
export const activateBypass = (id: number, body: { measuresInPlace: true; shownToOperator: true }) =>
  http.post<BypassDto>(`/bypasses/${id}/activation`, body)
export const removeBypass = (id: number, body: RemoveBypassInput) =>
  http.post<BypassDto>(`/bypasses/${id}/removal`, body)
export const cancelBypass = (id: number) => http.post<BypassDto>(`/bypasses/${id}/cancellation`)

export const getBypassReview = (filters: BypassFilters) => http.get<BypassReviewDto>('/bypass-review', { ...filters })
export const getRiskErosion = (query: RiskErosionQuery) => http.get<RiskErosion>('/bypass-review/risk', { ...query })
/** Address of the review's export (a download link). */
export const reviewExportUrl = (format: 'csv' | 'pdf', filters: BypassFilters) =>
  `/api/bypass-review/export${toQuery({ ...filters, format })}`

export const listTemporaryChanges = (siteId: number) =>
  http.get<ListResult<TemporaryChange>>('/change-requests', {
    view: 'all',
    type: ['temporary'],
    status: ['approved', 'implemented', 'closed'],
    siteId: [siteId],
    pageSize: 100,
  })

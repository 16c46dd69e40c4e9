import type { ListResult } from '@shared/schemas/common.ts'
import type {
  ClassifyDemandInput,
  CreateDemandInput,
  CreditDemandInput,
  DemandAssumptions,
  DemandAssumptionsInput,
  DemandDto,
  DemandRates,
  FailureRates,
} from '@shared/schemas/demands.ts'
import { http } from '@/api/client'

/** The list's filters (`GET /api/demands`). */
export interface DemandListQuery {
  siteId?: number[]
  limitId?: number[]
  kind?: DemandDto['kind'][]
  q?: string
  from?: string
  to?: string
  page?: number
  pageSize?: number
}

/** Cache keys of the demand log (Pinia Colada). */
export const demandKeys = {
  all: ['demands'] as const,
  list: (q: DemandListQuery) => ['demands', 'list', JSON.stringify(q)] as const,
  one: (id: number) => ['demands', id] as const,
}

export const listDemands = (query: DemandListQuery) => http.get<ListResult<DemandDto>>('/demands', { ...query })
export const getDemand = (id: number) => http.get<DemandDto>(`/demands/${id}`)
export const recordDemand = (body: CreateDemandInput) => http.post<DemandDto>('/demands', body)
export const classifyDemand = (id: number, body: ClassifyDemandInput) =>
  http.post<DemandDto>(`/demands/${id}/classification`, body)
export const creditDemand = (id: number, body: CreditDemandInput) => http.post<DemandDto>(`/demands/${id}/credit`, body)
export const getDemandRates = (query: { siteId?: number[]; limitId?: number[]; from?: string; to?: string }) =>
  http.get<DemandRates>('/demands/rates', { ...query })
export const getFailureRates = (query: { siteId?: number[]; from?: string; to?: string }) =>
  http.get<FailureRates>('/demands/failure-rates', { ...query })
export const proposeObservedLambdaDu = (body: { limitId: number; deviceKind: string; model: string }) =>
  http.post<{ changeRequestId: number; proposedLambdaDu: number }>('/demands/failure-rates/change-request', body)
export const setDemandAssumptions = (limitId: number, body: DemandAssumptionsInput) =>
  http.put<DemandAssumptions>(`/demands/assumptions/${limitId}`, body)

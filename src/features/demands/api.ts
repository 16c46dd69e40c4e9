import type { ListResult } from '@shared/schemas/common.ts'
import type {
  ClassifyDemandInput,
  CreateDemandInput,
  CreditDemandInput,
  DemandAssumptions,
  DemandAssumptionsInput,
  DemandDto,
  DemandListQuery,
  DemandRates,
  DemandRatesQuery,
  FailureRates,
  FailureRatesQuery,
  ProposeLambdaDuInput,
} from '@shared/schemas/demands.ts'
import { http } from '@/api/client'

export type { DemandListQuery }

/** Cache keys of the demand log (Pinia Colada). */
export const demandKeys = {
  all: ['demands'] as const,
  list: (q: DemandListQuery) => ['demands', 'list', JSON.stringify(q)] as const,
  one: (id: number) => ['demands', id] as const,
  /** observed vs assumed rates (saved assumptions invalidate every demand key) */
  rates: (q: DemandRatesQuery) => ['demands', 'rates', JSON.stringify(q)] as const,
}

export const listDemands = (query: DemandListQuery) => http.get<ListResult<DemandDto>>('/demands', { ...query })
export const getDemand = (id: number) => http.get<DemandDto>(`/demands/${id}`)
export const recordDemand = (body: CreateDemandInput) => http.post<DemandDto>('/demands', body)
export const classifyDemand = (id: number, body: ClassifyDemandInput) =>
  http.post<DemandDto>(`/demands/${id}/classification`, body)
export const creditDemand = (id: number, body: CreditDemandInput) => http.post<DemandDto>(`/demands/${id}/credit`, body)
export const getDemandRates = (query: DemandRatesQuery) => http.get<DemandRates>('/demands/rates', { ...query })
export const getFailureRates = (query: FailureRatesQuery) =>
  http.get<FailureRates>('/demands/failure-rates', { ...query })
export const proposeObservedLambdaDu = (body: ProposeLambdaDuInput) =>
  http.post<{ changeRequestId: number; proposedLambdaDu: number }>('/demands/failure-rates/change-request', body)
export const setDemandAssumptions = (limitId: number, body: DemandAssumptionsInput) =>
  http.put<DemandAssumptions>(`/demands/assumptions/${limitId}`, body)

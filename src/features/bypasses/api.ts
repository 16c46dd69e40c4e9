import { OVERDUE_TEST_STATUSES } from '@shared/domain/rules/trip-tests.ts'
import type { BypassDto, BypassFilters, BypassReviewDto } from '@shared/schemas/bypasses.ts'
import type { ListResult } from '@shared/schemas/common.ts'
import { http, toQuery } from '@/api/client'

export type { BypassFilters }

export interface RequestBypassBody {
  limitId: number
  reason: string
  plannedStart: string
  plannedEnd: string
  predefinedMeasuresConfirmed: boolean
  extraMeasures: string[]
  channelInstrumentId: number | null
  changeRequestId: number | null
}

export interface RemoveBypassBody {
  pvClearConfirmed: true
  protectionRestoredConfirmed: true
  note: string
}

export type SilBand = 1 | 2 | 3 | 4 | 'none'
export interface PfdFigures {
  pfd: number
  rrf: number
  band: SilBand
}

export interface RiskRow {
  limitId: number
  tag: string
  description: string
  targetSil: 1 | 2 | 3
  protectionState: string
  testStatus: string
  design: PfdFigures
  effective: PfdFigures
  bypassedHours: number
  channelBypassedHours: number
  actualIntervalHours: number | null
  belowTarget: boolean
  designBelowTarget: boolean
  /** device models on its channels whose observed λDU bound (70 %) exceeds its sensor λDU */
  observedLambdaDuAbove: { deviceKind: string; model: string; upper70: number; assumedLambdaDu: number }[]
  neverTested: boolean
  /** last passing full test, else the commissioning date (else the entry in the register), YYYY-MM-DD */
  untestedSince: string
  /** hours in the period with a dangerous undetected failure that a test then found (docs/bypasses.md#fault-exposure) */
  faultExposureHours: number
  faultExposures: { from: string; to: string; foundAt: string; ongoing: boolean }[]
  /** hours in the period the limit was degraded (failed test, not yet proven again) */
  degradedHours: number
}

export interface RiskErosion {
  period: { from: string; to: string; hours: number }
  items: RiskRow[]
  faultExposureConvention: string
  caution: string
}

/** One row of the trip-test schedule (used for the overdue tests on the home page). */
export interface ScheduleRow {
  limitId: number
  tag: string
  siteId: number
  siteCode: string
  areaName: string
  testStatus: string
  dueDate: string | null
}

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
}

export const listBypasses = (query: BypassFilters & { page?: number; pageSize?: number }) =>
  http.get<ListResult<BypassDto>>('/bypasses', { ...query })
export const getBypass = (id: number) => http.get<BypassDto>(`/bypasses/${id}`)
export const requestBypass = (body: RequestBypassBody) => http.post<BypassDto>('/bypasses', body)
export const authorizeBypass = (id: number, body: { password: string; comment: string; hours?: number }) =>
  http.post<BypassDto>(`/bypasses/${id}/authorizations`, body)
export const rejectBypass = (id: number, body: { password: string; comment: string }) =>
  http.post<BypassDto>(`/bypasses/${id}/rejections`, body)
export const activateBypass = (id: number, body: { measuresInPlace: true; shownToOperator: true }) =>
  http.post<BypassDto>(`/bypasses/${id}/activation`, body)
export const removeBypass = (id: number, body: RemoveBypassBody) =>
  http.post<BypassDto>(`/bypasses/${id}/removal`, body)
export const cancelBypass = (id: number) => http.post<BypassDto>(`/bypasses/${id}/cancellation`)

export const getBypassReview = (filters: BypassFilters) => http.get<BypassReviewDto>('/bypass-review', { ...filters })
export const getRiskErosion = (query: { siteId?: number[]; areaId?: number[]; from?: string; to?: string }) =>
  http.get<RiskErosion>('/bypass-review/risk', { ...query })
/** Address of the review's export (a download link). */
export const reviewExportUrl = (format: 'csv' | 'pdf', filters: BypassFilters) =>
  `/api/bypass-review/export${toQuery({ ...filters, format })}`

export const listOverdueTests = () =>
  http.get<{ items: ScheduleRow[]; total: number }>('/trip-tests/schedule', { status: [...OVERDUE_TEST_STATUSES] })
export const listTemporaryChanges = (siteId: number) =>
  http.get<ListResult<TemporaryChange>>('/change-requests', {
    view: 'all',
    type: ['temporary'],
    status: ['approved', 'implemented', 'closed'],
    siteId: [siteId],
    pageSize: 100,
  })

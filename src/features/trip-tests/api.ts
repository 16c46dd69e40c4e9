import type { Limit } from '@shared/schemas/register.ts'
import type {
  OverdueRepair,
  SignatureMeaning,
  TripTestBody,
  TestDeferralDto,
  TripTestDto,
} from '@shared/schemas/trip-tests.ts'
import { api, http, toQuery, uploadWithProgress } from '@/api/client'

export type TestStatus = Limit['testStatus']
export type { SignatureMeaning } from '@shared/schemas/trip-tests.ts'

/** One limit of the test schedule. */
export interface ScheduleItem {
  limitId: number
  tag: string
  description: string
  siteId: number
  siteCode: string
  areaName: string
  testStatus: TestStatus
  dueDate: string | null
  lastFullPass: string | null
  testIntervalMonths: number
  protectionState: Limit['protectionState']
  sil: number | null
  lateTests: number
}

export interface ScheduleQuery {
  siteId?: number[]
  areaId?: number[]
  status?: TestStatus[]
  late?: boolean
}

/** One row of the test history. */
export interface TripTestListItem {
  id: number
  limitId: number
  siteId: number
  limitTag: string
  kind: 'full' | 'partial'
  method: TripTestDto['method']
  performedAt: string
  asFound: number | null
  asFoundResult: TripTestDto['asFoundResult']
  asLeft: number | null
  asLeftResult: TripTestDto['asLeftResult']
  passed: boolean
  status: TripTestDto['status']
  setpoint: number
  toleranceEu: number
  recordedBy: string
  /** 'imported': brought from a former system by a history import */
  source: TripTestDto['source']
  testerName: string | null
}

/** The degraded state of a limit, newest first. */
/** A degradation of a limit as the API sends it (shared/schemas/trip-tests.ts). */
import type { DegradationItem } from '@shared/schemas/trip-tests.ts'
export type { DegradationItem }

export const getSchedule = (query: ScheduleQuery) =>
  http.get<{ items: ScheduleItem[]; total: number; counts: Partial<Record<TestStatus, number>> }>(
    '/trip-tests/schedule',
    { ...query, late: query.late ? 'true' : undefined },
  )
export const listTripTests = (query: {
  siteId?: number[]
  limitId?: number
  passed?: boolean
  page?: number
  pageSize?: number
}) =>
  http.get<{ items: TripTestListItem[]; total: number }>('/trip-tests', {
    ...query,
    passed: query.passed === undefined ? undefined : String(query.passed),
  })
export const getTripTest = (id: number) => http.get<TripTestDto>(`/trip-tests/${id}`)
export const createTripTest = (body: TripTestBody) => http.post<TripTestDto>('/trip-tests', body)
export const updateTripTest = (id: number, body: TripTestBody) => api<TripTestDto>('PUT', `/trip-tests/${id}`, body)
export const signTripTest = (id: number, meaning: SignatureMeaning, password: string, comment: string) =>
  http.post<TripTestDto>(`/trip-tests/${id}/signatures`, { meaning, password, comment })
export const runDigest = (siteId: number) =>
  http.post<{ sent: number; overdue: number; dueSoon: number }>('/trip-tests/digest-runs', { siteId })

/** Degraded limits whose signed repair deadline has passed (home, handover). */
export const listOverdueRepairs = (siteId?: number[]) =>
  http.get<{ items: OverdueRepair[] }>('/trip-tests/overdue-repairs', { siteId })
export const getDegradation = (limitId: number) =>
  http.get<{ items: DegradationItem[] }>(`/limits/${limitId}/degradation`)
export const signDegradationMeasures = (
  limitId: number,
  body: { compensatingMeasures: string[]; repairDeadline: string; password: string },
) => http.post<{ items: DegradationItem[] }>(`/limits/${limitId}/degradation`, body)
/** The plant manager accepts a repair deadline beyond the function's MTTR (a signature). */
export const approveRepairDeadline = (limitId: number, body: { password: string; comment?: string }) =>
  http.post<{ items: DegradationItem[] }>(`/limits/${limitId}/degradation/deadline-approval`, body)

/** Address of the test history as CSV (a download). */
export const exportUrl = (query: { siteId?: number[]; limitId?: number }) => `/api/trip-tests/export${toQuery(query)}`
/** Address of a record's PDF certificate (a download). */
export const certificateUrl = (id: number) => `/api/trip-tests/${id}/certificate`
/** Address of one attachment (a download). */
export const attachmentUrl = (id: number, attachmentId: number) => `/api/trip-tests/${id}/attachments/${attachmentId}`

/** Uploads an attachment and reports the upload's progress (0…1). */
export function uploadAttachment(
  id: number,
  file: File,
  onProgress: (fraction: number) => void,
): Promise<{ id: number; fileName: string }> {
  const form = new FormData()
  form.append('file', file)
  return uploadWithProgress(`/trip-tests/${id}/attachments`, form, onProgress)
}

// Test deferrals (docs/trip-tests.md#test-deferrals)
export const listDeferrals = (query: { limitId?: number; siteId?: number[]; pageSize?: number }) =>
  http.get<{ items: TestDeferralDto[]; total: number }>('/test-deferrals', { ...query })
export const requestDeferral = (body: {
  limitId: number
  newDueDate: string
  reason: string
  compensatingMeasures: string[]
}) => http.post<TestDeferralDto>('/test-deferrals', body)
export const decideDeferral = (
  id: number,
  decision: 'approve' | 'reject',
  body: { password: string; comment: string },
) => http.post<TestDeferralDto>(`/test-deferrals/${id}/${decision === 'approve' ? 'approval' : 'rejection'}`, body)

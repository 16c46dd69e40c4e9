import type { Limit } from '@shared/schemas/register.ts'
import type {
  DeadlineApprovalInput,
  DeferralDecisionInput,
  DegradationMeasuresInput,
  DigestRunInput,
  OverdueRepair,
  ScheduleItem,
  ScheduleParams,
  ScheduleResponse,
  SignatureMeaning,
  TestDeferralDto,
  TestDeferralInput,
  TestDeferralList,
  TestDeferralListParams,
  TripTestBody,
  TripTestDto,
  TripTestList,
  TripTestListItem,
  TripTestListParams,
} from '@shared/schemas/trip-tests.ts'
import { api, http, toQuery } from '@/api/client'

export type TestStatus = Limit['testStatus']
export type { SignatureMeaning } from '@shared/schemas/trip-tests.ts'

export type { ScheduleItem, ScheduleParams as ScheduleQuery, TripTestListItem, TripTestListParams }

/** Cache keys of the trip-test data (Pinia Colada). */
export const tripTestKeys = {
  all: ['trip-tests'] as const,
  one: (id: number) => ['trip-tests', id] as const,
  list: (q: TripTestListParams) => ['trip-tests', 'list', JSON.stringify(q)] as const,
  schedule: (q: ScheduleParams) => ['trip-tests', 'schedule', JSON.stringify(q)] as const,
  degradation: (limitId: number) => ['trip-tests', 'degradation', limitId] as const,
  /** a limit's test deferrals (a request invalidates them; a decision moves the due date: every trip-test key) */
  deferrals: (limitId: number) => ['trip-tests', 'deferrals', limitId] as const,
}

/** The degraded state of a limit, newest first. */
/** A degradation of a limit as the API sends it (shared/schemas/trip-tests.ts). */
import type { DegradationItem } from '@shared/schemas/trip-tests.ts'
export type { DegradationItem }

export const getSchedule = (query: ScheduleParams) =>
  http.get<ScheduleResponse>('/trip-tests/schedule', { ...query, late: query.late ? 'true' : undefined })
export const listTripTests = (query: TripTestListParams) =>
  http.get<TripTestList>('/trip-tests', {
    ...query,
    passed: query.passed === undefined ? undefined : String(query.passed),
  })
export const getTripTest = (id: number) => http.get<TripTestDto>(`/trip-tests/${id}`)
export const createTripTest = (body: TripTestBody) => http.post<TripTestDto>('/trip-tests', body)
export const updateTripTest = (id: number, body: TripTestBody) => api<TripTestDto>('PUT', `/trip-tests/${id}`, body)
export const signTripTest = (id: number, meaning: SignatureMeaning, password: string, comment: string) =>
  http.post<TripTestDto>(`/trip-tests/${id}/signatures`, { meaning, password, comment })
export const runDigest = (siteId: number) =>
  http.post<{ sent: number; overdue: number; dueSoon: number }>('/trip-tests/digest-runs', {
    siteId,
  } satisfies DigestRunInput)

/** Degraded limits whose signed repair deadline has passed (home, handover). */
export const listOverdueRepairs = (siteId?: number[]) =>
  http.get<{ items: OverdueRepair[] }>('/trip-tests/overdue-repairs', { siteId })
export const getDegradation = (limitId: number) =>
  http.get<{ items: DegradationItem[] }>(`/limits/${limitId}/degradation`)
export const signDegradationMeasures = (limitId: number, body: DegradationMeasuresInput) =>
  http.post<{ items: DegradationItem[] }>(`/limits/${limitId}/degradation`, body)
/** The plant manager accepts a repair deadline beyond the function's MTTR (a signature). */
export const approveRepairDeadline = (limitId: number, body: DeadlineApprovalInput) =>
  http.post<{ items: DegradationItem[] }>(`/limits/${limitId}/degradation/deadline-approval`, body)

/** Address of the test history as CSV (a download). */
export const exportUrl = (query: Pick<TripTestListParams, 'siteId' | 'limitId'>) =>
  `/api/trip-tests/export${toQuery(query)}`
/** Address of a record's PDF certificate (a download). */
export const certificateUrl = (id: number) => `/api/trip-tests/${id}/certificate`

// Test deferrals (docs/trip-tests.md#test-deferrals)
export const listDeferrals = (query: TestDeferralListParams) =>
  http.get<TestDeferralList>('/test-deferrals', { ...query })
export const requestDeferral = (body: TestDeferralInput) => http.post<TestDeferralDto>('/test-deferrals', body)
export const decideDeferral = (id: number, decision: 'approve' | 'reject', body: DeferralDecisionInput) =>
  http.post<TestDeferralDto>(`/test-deferrals/${id}/${decision === 'approve' ? 'approval' : 'rejection'}`, body)

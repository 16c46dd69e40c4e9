import type { TestSignal } from '@shared/domain/test-signal.ts'
import type { ListResult } from '@shared/schemas/common.ts'
import type {
  CreateInstrumentInput,
  CreateLimitInput,
  InstrumentListQuery,
  InstrumentRecord,
  Limit,
  LimitListFilters,
  LimitExportFormat,
  LimitListParams,
  LimitPage,
  LimitRevision,
  Process,
  ProcessListQuery,
  RegisterRow,
  ResponseSheetsQuery,
  TestSignalQuery,
  UpdateLimitRequest,
} from '@shared/schemas/register.ts'
import type { ImportMapping, ImportResult } from '@shared/schemas/imports.ts'
import { http, prefetchGet, toQuery, uploadWithProgress } from '@/api/client'

/** Filters of the register list and its export; arrays repeat the query key (contract in shared/schemas). */
export type LimitFilters = LimitListFilters
export type LimitListQuery = Omit<LimitListParams, 'view'>

export type { InstrumentRecord, LimitRevision }

/** Cache keys of the register (Pinia Colada): a write invalidates the resource it changed. */
export const registerKeys = {
  limits: ['limits'] as const,
  limit: (id: number) => ['limits', id] as const,
  processes: ['processes'] as const,
  processList: (q: ProcessListQuery) => ['processes', 'list', JSON.stringify(q)] as const,
  instruments: ['instruments'] as const,
  instrumentList: (q: InstrumentListQuery) => ['instruments', 'list', JSON.stringify(q)] as const,
  instrument: (id: number) => ['instruments', id] as const,
}

/** Whole limits (the detail and form pages' siblings on an instrument). */
export const listLimits = (query: LimitListQuery) => http.get<LimitPage>('/limits', { ...query })
/** The register screen's page of slim rows. */
export const listRegisterRows = (query: LimitListQuery) =>
  http.get<LimitPage<RegisterRow>>('/limits', registerRowsQuery(query))
/** Asks for that page before the screen's code has loaded (the router, on first load). */
export const prefetchRegisterRows = (query: LimitListQuery) => prefetchGet('/limits', registerRowsQuery(query))
const registerRowsQuery = (query: LimitListQuery) => ({ ...query, view: 'row' as const })
export const getLimit = (id: number) => http.get<Limit>(`/limits/${id}`)
export const createLimit = (input: CreateLimitInput) => http.post<Limit>('/limits', input)
export const updateLimit = (id: number, input: UpdateLimitRequest) => http.patch<Limit>(`/limits/${id}`, input)
export const deleteLimit = (id: number) => http.delete<void>(`/limits/${id}`)
export const listLimitRevisions = (id: number) =>
  http.get<{ items: LimitRevision[]; total: number }>(`/limits/${id}/revisions`)
export const getTestSignal = (id: number, query: TestSignalQuery) =>
  http.get<TestSignal>(`/limits/${id}/test-signal`, query)

/** Address of the register file (CSV or XLSX) for the given filters; used as a download link. */
export function limitExportUrl(format: LimitExportFormat, filters: LimitFilters): string {
  return `/api/limits/export${toQuery({ ...filters, format })}`
}

/** Address of the alarm response sheet booklet (PDF) of a site or one of its areas; used as a download link. */
export const responseSheetsUrl = (query: ResponseSheetsQuery) => `/api/alarm-response-sheets${toQuery(query)}`

export const listProcesses = (query: ProcessListQuery = {}) => http.get<ListResult<Process>>('/processes', { ...query })
export const prefetchProcesses = (query: ProcessListQuery) => prefetchGet('/processes', { ...query })
export const createProcess = (input: { areaId: number; name: string; description: string }) =>
  http.post<Process>('/processes', input)
export const updateProcess = (id: number, input: { name?: string; description?: string }) =>
  http.patch<Process>(`/processes/${id}`, input)

export const listInstruments = (query: InstrumentListQuery = {}) =>
  http.get<ListResult<InstrumentRecord>>('/instruments', { ...query })
export const getInstrument = (id: number) => http.get<InstrumentRecord>(`/instruments/${id}`)
/** Active limits by tag or description, for the pickers of the bypass, trip-test and demand forms. */
export const listActiveLimits = (query: { siteId?: number[]; q?: string; pageSize?: number }) =>
  http.get<ListResult<Limit>>('/limits', {
    siteId: query.siteId,
    status: ['active'],
    q: query.q,
    pageSize: query.pageSize ?? 50,
    sort: 'tag',
  })
/** Limits in any state by tag or description (filter pickers). */
export const searchLimits = (query: { siteId?: number[]; q?: string }) =>
  http.get<ListResult<Limit>>('/limits', { siteId: query.siteId, q: query.q, pageSize: 50, sort: 'tag' })
/** Active limits whose protection is degraded (home). */
export const listDegradedLimits = () =>
  http.get<ListResult<Limit>>('/limits', { status: ['active'], protectionState: ['degraded'], pageSize: 20 })
export const createInstrument = (input: CreateInstrumentInput) => http.post<InstrumentRecord>('/instruments', input)
export const updateInstrument = (id: number, input: Partial<CreateInstrumentInput>) =>
  http.patch<InstrumentRecord>(`/instruments/${id}`, input)

// ---- the register import (docs/register.md, "The import") ----

/**
 * What one upload sends: the file, the site it is for, an optional mapping (file header → column key, ''
 * ignores).
 */
export interface ImportUpload {
  file: File
  siteId: number
  mapping?: ImportMapping
  dryRun?: boolean
}

/** Uploads an import file (site, mapping, dry run) to `url` and reports the upload's progress (0…1). */
export function uploadImportFile<T>(
  url: string,
  input: { file: File; siteId: number; mapping?: Record<string, string>; dryRun?: boolean },
  onProgress: (fraction: number) => void,
): Promise<T> {
  const form = new FormData()
  form.append('siteId', String(input.siteId))
  if (input.mapping) form.append('mapping', JSON.stringify(input.mapping))
  form.append('dryRun', String(input.dryRun ?? true))
  form.append('file', input.file)
  return uploadWithProgress(
    url,
    form,
    onProgress,
    'The upload did not reach the server; check the connection and the file size, then try again',
  )
}

/** Uploads a register file for a dry run and reports the upload's progress (0…1). */
export const uploadImport = (input: ImportUpload, onProgress: (fraction: number) => void) =>
  uploadImportFile<ImportResult>('/imports', input, onProgress)

/** The mapping the user's last import used (file header → column key). */
export const getImportMapping = () => http.get<{ mapping: ImportMapping }>('/imports/mapping')
/** Writes a checked import, all or nothing; the answer names the draft change request opened for it. */
export const commitImport = (id: number) => http.post<ImportResult>(`/imports/${id}/commit`)

import type { ListResult } from '@shared/schemas/common.ts'
import type {
  ExportMapping,
  Finding,
  FindingFigures,
  FindingKind,
  FindingState,
  LimitReconciliation,
  ReadNowResult,
  RegisterMapEntry,
  Run,
  Source,
} from '@shared/schemas/reconciliation.ts'
import { http, uploadWithProgress } from '@/api/client'

export interface FindingFilters {
  siteId?: number[]
  sourceId?: number[]
  limitId?: number[]
  kind?: FindingKind[]
  state?: FindingState[]
  q?: string
  page?: number
  pageSize?: number
  sort?: string
}

/** The answer to an export upload: the run, and how the file's columns were read. */
export type UploadResult = Run & { mapping: Record<string, string>; ignoredColumns: string[] }

export interface SourcePatch {
  version: number
  name?: string
  description?: string
  host?: string | null
  port?: number | null
  unitId?: number | null
  timeoutMs?: number
  registerMap?: RegisterMapEntry[]
  columnMapping?: ExportMapping
  scheduleHours?: number | null
  active?: boolean
}

/** Cache keys of the reconciliation data (Pinia Colada). */
export const reconKeys = {
  all: ['reconciliation'] as const,
  sources: (q: unknown) => ['reconciliation', 'sources', JSON.stringify(q)] as const,
  source: (id: number) => ['reconciliation', 'source', id] as const,
  runs: (q: unknown) => ['reconciliation', 'runs', JSON.stringify(q)] as const,
  findings: (q: unknown) => ['reconciliation', 'findings', JSON.stringify(q)] as const,
  finding: (id: number) => ['reconciliation', 'finding', id] as const,
  figures: (q: unknown) => ['reconciliation', 'figures', JSON.stringify(q)] as const,
  limit: (id: number) => ['reconciliation', 'limit', id] as const,
}

export const listSources = (query: { siteId?: number[] } = {}) =>
  http.get<ListResult<Source>>('/reconciliation-sources', { ...query, pageSize: 200 })
export const getSource = (id: number) => http.get<Source>(`/reconciliation-sources/${id}`)
export const updateSource = (id: number, patch: SourcePatch) =>
  http.patch<Source>(`/reconciliation-sources/${id}`, patch)
export const readNow = (id: number) => http.post<ReadNowResult>(`/reconciliation-sources/${id}/reads`)
export const runNow = (id: number) => http.post<Run>(`/reconciliation-sources/${id}/runs`)
export function uploadExport(id: number, file: File, mapping: ExportMapping | null, onProgress: (f: number) => void) {
  const form = new FormData()
  form.append('file', file)
  if (mapping && Object.keys(mapping).length) form.append('mapping', JSON.stringify(mapping))
  return uploadWithProgress<UploadResult>(`/reconciliation-sources/${id}/exports`, form, onProgress)
}

export const listRuns = (query: { siteId?: number[]; sourceId?: number[]; page?: number; pageSize?: number }) =>
  http.get<ListResult<Run>>('/reconciliation-runs', { ...query })

export const listFindings = (query: FindingFilters) => http.get<ListResult<Finding>>('/findings', { ...query })
export const getFinding = (id: number) => http.get<Finding>(`/findings/${id}`)
export const findingFigures = (query: { siteId?: number[]; months?: number }) =>
  http.get<FindingFigures>('/findings/figures', { ...query })
export const acknowledgeFinding = (id: number, version: number) =>
  http.post<Finding>(`/findings/${id}/acknowledgement`, { version })
export const linkChangeRequest = (id: number, body: { version: number; changeRequestId: number }) =>
  http.post<Finding>(`/findings/${id}/change-request`, body)
export const acceptFinding = (id: number, body: { version: number; reason: string; password: string }) =>
  http.post<Finding>(`/findings/${id}/acceptance`, body)

export const limitReconciliations = (limitId: number) =>
  http.get<{ items: LimitReconciliation[] }>(`/limits/${limitId}/reconciliations`)

/** Change requests of a site that touch a limit, to link to a finding. */
export interface ChangeChoice {
  id: number
  title: string
  status: string
}
export const listChangesOfLimit = (siteId: number, limitId: number) =>
  http.get<ListResult<ChangeChoice>>('/change-requests', { view: 'all', siteId: [siteId], limitId, pageSize: 100 })

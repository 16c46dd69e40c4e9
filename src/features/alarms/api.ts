import type {
  AlarmFigures,
  AlarmState,
  JournalUpload,
  ReplayRun,
  ReplayRunInput,
  ReplayUpload,
} from '@shared/schemas/alarms.ts'
import type { ListResult } from '@shared/schemas/common.ts'
import { http, uploadWithProgress } from '@/api/client'

// Alarm journals, figures, alarm states and replays (docs/alarms.md).

export const listJournals = (siteId?: number) => http.get<ListResult<JournalUpload>>('/alarm-journals', { siteId })
export const getJournal = (id: number) => http.get<JournalUpload>(`/alarm-journals/${id}`)
export const rememberedJournalMapping = () => http.get<{ mapping: Record<string, string> }>('/alarm-journals/mapping')
export function uploadJournal(
  file: File,
  f: { siteId: number; timeZone: string; mapping?: Record<string, string> },
  onProgress: (x: number) => void,
) {
  const form = new FormData()
  form.append('siteId', String(f.siteId))
  form.append('timeZone', f.timeZone)
  if (f.mapping && Object.keys(f.mapping).length) form.append('mapping', JSON.stringify(f.mapping))
  form.append('file', file)
  return uploadWithProgress<JournalUpload>('/alarm-journals', form, onProgress)
}

export const getFigures = (q: { siteId: number; areaId?: number; position?: string; from?: string; to?: string }) =>
  http.get<AlarmFigures>('/alarm-figures', q)
export const reportUrl = (siteId: number, month: string) =>
  `/api/alarm-figures/report.pdf?siteId=${siteId}&month=${month}`

export const listAlarmStates = (q: { siteId?: number; status?: 'active' | 'ended'; overdue?: 'true' }) =>
  http.get<ListResult<AlarmState>>('/alarm-states', { ...q, pageSize: 200 })
export const startAlarmState = (body: {
  siteId: number
  tag: string
  kind: AlarmState['kind']
  reason: string
  hours: number
  changeRequestId?: number | null
  password?: string
}) => http.post<AlarmState>('/alarm-states', body)
export const endAlarmState = (id: number, note: string) => http.post<AlarmState>(`/alarm-states/${id}/end`, { note })

export const listReplays = (siteId?: number) => http.get<ListResult<ReplayUpload>>('/replays', { siteId })
export const getReplayUpload = (id: number) => http.get<ReplayUpload>(`/replays/${id}`)
export function uploadProcessData(
  file: File,
  f: { siteId: number; instrumentId?: number; timeZone: string },
  onProgress: (x: number) => void,
) {
  const form = new FormData()
  form.append('siteId', String(f.siteId))
  if (f.instrumentId) form.append('instrumentId', String(f.instrumentId))
  form.append('timeZone', f.timeZone)
  form.append('file', file)
  return uploadWithProgress<ReplayUpload>('/replays', form, onProgress)
}
export const runReplay = (id: number, body: ReplayRunInput) => http.post<ReplayRun>(`/replays/${id}/run`, body)

/** Opens a change request with the new deadband and delays (never a direct change of the limit). */
export const proposeSettings = (b: {
  siteId: number
  limitId: number
  tag: string
  deadband: number
  onDelaySec: number
  offDelaySec: number
  rationale: string
}) =>
  http.post<{ id: number }>('/change-requests', {
    siteId: b.siteId,
    type: 'permanent',
    title: `Deadband and delays of ${b.tag} from a replay`,
    rationale: b.rationale,
    items: [
      {
        kind: 'modify',
        limitId: b.limitId,
        changes: { deadband: b.deadband, deadbandUnit: 'eu', onDelaySec: b.onDelaySec, offDelaySec: b.offDelaySec },
      },
    ],
  })

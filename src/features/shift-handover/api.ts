import type { HandOverInput, ShiftHandoverDto, ShiftHandoverState } from '@shared/schemas/shift-handover.ts'
import { http } from '@/api/client'

// The shift handover's endpoints (docs/api.md#shift-handover) and their cache keys.

export const handoverKeys = {
  all: ['shift-handover'] as const,
  state: (areaIds: number[]) => ['shift-handover', 'state', ...areaIds] as const,
}

export const getHandoverState = (areaIds: number[]) =>
  http.get<ShiftHandoverState>('/shift-handovers/state', { areaId: areaIds })
export const handOver = (body: HandOverInput) => http.post<ShiftHandoverDto>('/shift-handovers', body)
export const getHandover = (id: number) => http.get<ShiftHandoverDto>(`/shift-handovers/${id}`)
export const acceptHandover = (id: number, body: { contentHash: string; password: string }) =>
  http.post<ShiftHandoverDto>(`/shift-handovers/${id}/acceptance`, body)

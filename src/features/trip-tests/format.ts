import {
  mdiAlertOctagon,
  mdiArrowDownBoldCircleOutline,
  mdiCheckCircleOutline,
  mdiCloseOctagon,
  mdiPauseCircleOutline,
  mdiShieldCheckOutline,
  mdiShieldOffOutline,
} from '@mdi/js'
import type { TripTestDto } from '@shared/schemas/trip-tests.ts'
import type { TestStatus } from './api'

// Labels and styles of the trip-test screens.

export const METHOD_LABELS: Record<TripTestDto['method'], string> = {
  injection: 'Signal injection',
  process: 'Process driven to the trip point',
  setpoint_lowered: 'Setpoint moved across the process value',
  reference_gauge: 'Against a reference gauge (switch)',
}
export const INJECTION_POINT_LABELS: Record<string, string> = {
  sensor: 'At the sensor input',
  transmitter_output: 'At the transmitter output',
}
export const SOURCE_MODE_LABELS: Record<string, string> = {
  mv_source: 'Millivolt source',
  tc_simulate: 'Thermocouple simulation',
}
export const KIND_LABELS: Record<'full' | 'partial', string> = { full: 'Full test', partial: 'Partial test' }
export const RECORD_STATUS_LABELS: Record<TripTestDto['status'], string> = {
  recorded: 'Not signed yet',
  signed: 'Signed',
  completed: 'Completed',
}
export const RECORD_STATUS_COLORS: Record<TripTestDto['status'], string> = {
  recorded: 'secondary',
  signed: 'info',
  completed: 'success',
}

export const TEST_STATUS_LABELS: Record<TestStatus, string> = {
  never_tested: 'Never tested',
  ok: 'Up to date',
  due_soon: 'Due within 30 days',
  in_grace: 'In grace period',
  overdue: 'Overdue',
}
export const TEST_STATUS_COLORS: Record<TestStatus, string> = {
  never_tested: 'secondary',
  ok: 'success',
  due_soon: 'info',
  in_grace: 'warning',
  overdue: 'error',
}

/** The as-found and as-left results as chips: the failures in capitals and solid colour, so they stand out. */
export const RESULT_STYLE: Record<string, { label: string; color: string; variant: 'flat' | 'tonal'; icon: string }> = {
  in_tolerance: { label: 'In tolerance', color: 'success', variant: 'tonal', icon: mdiCheckCircleOutline },
  out_safe: { label: 'Out, safe side', color: 'warning', variant: 'tonal', icon: mdiArrowDownBoldCircleOutline },
  out_dangerous: { label: 'OUT, DANGEROUS SIDE', color: 'error', variant: 'flat', icon: mdiAlertOctagon },
  no_trip: { label: 'NO TRIP', color: 'error', variant: 'flat', icon: mdiCloseOctagon },
  out: { label: 'OUT OF TOLERANCE', color: 'error', variant: 'flat', icon: mdiAlertOctagon },
}

export const MEANING_LABELS: Record<string, string> = {
  performed: 'Performed',
  witnessed: 'Witnessed',
  returned_to_service: 'Returned to service',
  accepted: 'Accepted back into service',
}

/** A number rounded for display (values are kept exactly; this only shortens computed ones). */
export function rounded(v: number | null | undefined, digits = 6): string {
  if (v === null || v === undefined || Number.isNaN(v)) return '—'
  return String(Number(v.toFixed(digits))).replace('-', '−')
}

/** Protection state chips: degraded in solid red and capitals, the state a technician must not miss. */
export const PROTECTION_STYLE: Record<
  string,
  { label: string; color: string; variant: 'outlined' | 'flat'; icon: string }
> = {
  in_service: { label: 'In service', color: 'success', variant: 'outlined', icon: mdiShieldCheckOutline },
  bypassed: { label: 'Bypassed', color: 'warning', variant: 'flat', icon: mdiPauseCircleOutline },
  degraded: { label: 'DEGRADED', color: 'error', variant: 'flat', icon: mdiShieldOffOutline },
}

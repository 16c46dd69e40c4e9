import {
  mdiAlertOctagonOutline,
  mdiBellRingOutline,
  mdiInformationOutline,
  mdiPauseCircleOutline,
  mdiShieldCheckOutline,
  mdiShieldOffOutline,
} from '@mdi/js'
import { returnPoint as exactReturnPoint } from '@shared/domain/operating-window.ts'
import type { Limit, Signal } from '@shared/schemas/register.ts'
import { ROLE_LABELS } from '@shared/domain/roles.ts'

// Labels and number formatting shared by the register's screens.

export const CLASS_LABELS: Record<Limit['limitClass'], string> = { alarm: 'Alarm', alert: 'Alert', trip: 'Trip' }
export const ALARM_TYPE_LABELS: Record<Limit['alarmType'], string> = {
  absolute: 'Absolute (high / low)',
  deviation: 'Deviation',
  rate_of_change: 'Rate of change',
  discrepancy: 'Discrepancy',
  bad_value: 'Bad value',
}
export const IMPACT_LABELS: Record<NonNullable<Limit['impactCategory']>, string> = {
  safety: 'Safety',
  environment: 'Environment',
  asset_production: 'Asset or production',
}
export const DIRECTION_LABELS: Record<Limit['direction'], string> = { high: 'High', low: 'Low' }
export const STATUS_LABELS: Record<Limit['status'], string> = {
  proposed: 'Proposed (draft)',
  active: 'Active',
  retired: 'Retired',
}
export const PROTECTION_LABELS: Record<Limit['protectionState'], string> = {
  in_service: 'In service',
  bypassed: 'Bypassed',
  degraded: 'Degraded',
}
export const TEST_STATUS_LABELS: Record<Limit['testStatus'], string> = {
  never_tested: 'Never tested',
  ok: 'OK',
  due_soon: 'Due soon',
  in_grace: 'In grace',
  overdue: 'Overdue',
}
export const SEVERITY_LABELS: Record<Limit['severity'], string> = {
  minor: 'Minor',
  moderate: 'Moderate',
  major: 'Major',
  severe: 'Severe',
}
/** The safety integrity levels a limit may carry, as the choices of a select; null: not SIL-rated. */
export const SIL_CHOICES: { title: string; value: number | null }[] = [
  { title: 'Not SIL-rated', value: null },
  { title: 'SIL 1', value: 1 },
  { title: 'SIL 2', value: 2 },
  { title: 'SIL 3', value: 3 },
]
export const VARIABLE_LABELS: Record<string, string> = {
  temperature: 'Temperature',
  pressure: 'Pressure',
  level: 'Level',
  flow: 'Flow',
  analytical: 'Analytical',
  other: 'Other',
}
export const DEVICE_KIND_LABELS: Record<string, string> = {
  limit_controller: 'Limit controller',
  safety_plc: 'Safety PLC',
  control_system: 'Control system',
  indicator: 'Indicator',
  switch: 'Switch',
  other: 'Other',
}
export const BURNOUT_LABELS: Record<string, string> = { upscale: 'Upscale', downscale: 'Downscale', none: 'None' }
export const SUBSYSTEM_ROLE_LABELS: Record<string, string> = {
  sensor: 'Sensor',
  logic: 'Logic solver',
  final_element: 'Final element',
}

export const CLASS_COLORS: Record<Limit['limitClass'], string> = { alarm: 'warning', alert: 'info', trip: 'error' }
export const CLASS_ICONS: Record<Limit['limitClass'], string> = {
  alarm: mdiBellRingOutline,
  alert: mdiInformationOutline,
  trip: mdiAlertOctagonOutline,
}
export const STATUS_COLORS: Record<Limit['status'], string> = {
  proposed: 'info',
  active: 'success',
  retired: 'secondary',
}
/** Test status chips: overdue solid in the error colour so it stands out in a long list. */
export const TEST_STATUS_STYLE: Record<Limit['testStatus'], { color: string; variant: 'tonal' | 'flat' }> = {
  never_tested: { color: 'secondary', variant: 'tonal' },
  ok: { color: 'success', variant: 'tonal' },
  due_soon: { color: 'info', variant: 'tonal' },
  in_grace: { color: 'warning', variant: 'tonal' },
  overdue: { color: 'error', variant: 'flat' },
}
export const PROTECTION_STYLE: Record<
  Limit['protectionState'],
  { color: string; variant: 'outlined' | 'flat'; icon: string }
> = {
  in_service: { color: 'success', variant: 'outlined', icon: mdiShieldCheckOutline },
  bypassed: { color: 'warning', variant: 'flat', icon: mdiPauseCircleOutline },
  degraded: { color: 'error', variant: 'flat', icon: mdiShieldOffOutline },
}

export const resetRoleLabel = (role: string | null) =>
  role ? ((ROLE_LABELS as Record<string, string>)[role] ?? role) : '—'

/** A stored number as entered (no rounding: values are kept exactly). */
export function num(v: number | null | undefined): string {
  if (v === null || v === undefined || Number.isNaN(v)) return '—'
  return String(v).replace('-', '−')
}

/** A value with its unit, `—` when missing. */
export function withUnit(v: number | null | undefined, unit: string): string {
  if (v === null || v === undefined) return '—'
  return unit ? `${num(v)} ${unit}` : num(v)
}

/** The span of a measuring range. */
export function spanOf(range: { rangeLow: number; rangeHigh: number }): number {
  return range.rangeHigh - range.rangeLow
}

/** A deadband in engineering units (a percent-of-span deadband converted through the span). */
export function deadbandEu(
  deadband: number,
  deadbandUnit: 'eu' | 'percent_span',
  range: { rangeLow: number; rangeHigh: number } | null,
): number | null {
  if (deadbandUnit === 'eu') return deadband
  if (!range) return null
  return Number(((deadband / 100) * spanOf(range)).toPrecision(12))
}

/** The deadband as text: `5 °C` or `1 % of span (6 °C)`. */
export function deadbandText(
  l: { deadband: number; deadbandUnit: 'eu' | 'percent_span' },
  unit: string,
  range: { rangeLow: number; rangeHigh: number } | null,
): string {
  if (l.deadbandUnit === 'eu') return withUnit(l.deadband, unit)
  const eu = deadbandEu(l.deadband, l.deadbandUnit, range)
  return eu === null ? `${num(l.deadband)} % of span` : `${num(l.deadband)} % of span (${withUnit(eu, unit)})`
}

/**
 * The return (reset) point of a limit as text, in exact decimals (shared/domain/operating-window.ts): a high limit
 * returns below setpoint − deadband, a low one above setpoint + deadband. Null for a deadband in % of span without
 * the instrument's range.
 */
export function returnPointText(
  l: { direction: 'high' | 'low'; setpoint: number; deadband: number; deadbandUnit: 'eu' | 'percent_span' },
  range: { rangeLow: number; rangeHigh: number } | null,
): string | null {
  if (l.deadbandUnit !== 'eu' && !range) return null
  return exactReturnPoint(l, range ?? { rangeLow: 0, rangeHigh: 0 }).replace('-', '−')
}

/** A calendar date as text (the register list's name for `dateText`). */
export { dateText as calendarDate } from '@/format'

/** The input signal in words. */
export function signalLabel(s: Signal | null | undefined): string {
  if (!s) return '—'
  switch (s.kind) {
    case 'thermocouple':
      return `Thermocouple type ${s.tcType}${s.headTransmitter ? ', head transmitter' : ''}`
    case 'rtd':
      return `${s.element} RTD, ${s.wires}-wire${s.headTransmitter ? ', head transmitter' : ''}`
    case 'current':
      return `4–20 mA${s.sqrtExtraction ? ' with square-root extraction' : ''}`
    case 'voltage':
      return `${s.low}–${s.high} V`
    case 'switch':
      return 'Discrete switch'
  }
}

/** A value of a revision change, readable. */
export function changeValue(v: unknown): string {
  if (v === null || v === undefined || v === '') return '—'
  if (typeof v === 'boolean') return v ? 'yes' : 'no'
  if (Array.isArray(v))
    return v.length ? v.map((x) => (typeof x === 'object' ? JSON.stringify(x) : String(x))).join('; ') : '—'
  if (typeof v === 'object') return JSON.stringify(v)
  return String(v)
}

/** Field names of a limit in words (revision history, findings). */
export const FIELD_LABELS: Record<string, string> = {
  tag: 'Tag',
  description: 'Description',
  processId: 'Process',
  instrumentIds: 'Instruments',
  direction: 'Direction',
  limitClass: 'Class',
  setpoint: 'Setpoint',
  deadband: 'Deadband',
  deadbandUnit: 'Deadband unit',
  onDelaySec: 'On-delay',
  offDelaySec: 'Off-delay',
  latching: 'Latching',
  resetRole: 'Reset by',
  badValueTrip: 'Trips on bad value',
  action: 'Action',
  consequence: 'Consequence',
  operatorResponse: 'Operator response',
  responseTimeMin: 'Time to respond',
  severity: 'Severity',
  priority: 'Priority',
  priorityExplanation: 'Priority derivation',
  analyticalLimit: 'Analytical limit',
  processSafetyTimeSec: 'Process safety time',
  requiredResponseTimeSec: 'Required response time',
  bypassPermitted: 'Bypass permitted',
  maxBypassHours: 'Longest bypass',
  compensatingMeasures: 'Compensating measures',
  testIntervalMonths: 'Test interval',
  testGraceDays: 'Test grace',
  codeSetInterval: 'Interval set by code',
  sil: 'SIL',
  subsystems: 'Subsystems',
  status: 'Status',
  operatingWindow: 'Operating window',
  siteId: 'Site',
  areaId: 'Area',
}

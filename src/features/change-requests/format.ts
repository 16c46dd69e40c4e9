import { TZDate } from '@date-fns/tz'
import { mdiAlertDecagramOutline, mdiCalendarClockOutline, mdiSwapHorizontal } from '@mdi/js'
import type { ChangeItemDto, ChangeStatus } from '@shared/schemas/change-requests.ts'
import { ALARM_PRIORITIES, DEFAULT_ALARM_PHILOSOPHY } from '@shared/domain/priority.ts'
import { RESET_ROLES, type Signal } from '@shared/schemas/register.ts'
import { ROLE_LABELS } from '@shared/schemas/users.ts'
import { choicesOf, formatInZone } from '@/format'
import {
  BURNOUT_LABELS,
  CLASS_LABELS,
  DIRECTION_LABELS,
  SEVERITY_LABELS,
  SIL_CHOICES,
  signalLabel,
} from '@/features/register/format'
import type { ChangeType } from './api'

// Labels, field descriptions and value formatting of the change screens.

export const STATUS_LABELS: Record<ChangeStatus, string> = {
  draft: 'Draft',
  submitted: 'Waiting for approval',
  approved: 'Approved',
  rejected: 'Rejected',
  implemented: 'Implemented',
  closed: 'Closed',
  withdrawn: 'Withdrawn',
}
export const STATUS_COLORS: Record<ChangeStatus, string> = {
  draft: 'secondary',
  submitted: 'info',
  approved: 'primary',
  rejected: 'error',
  implemented: 'success',
  closed: 'success',
  withdrawn: 'secondary',
}
export const TYPE_LABELS: Record<ChangeType, string> = {
  permanent: 'Permanent',
  temporary: 'Temporary',
  emergency: 'Emergency',
}
export const TYPE_STYLE: Record<ChangeType, { color: string; variant: 'flat' | 'tonal' | 'outlined'; icon: string }> = {
  permanent: { color: 'primary', variant: 'outlined', icon: mdiSwapHorizontal },
  temporary: { color: 'warning', variant: 'tonal', icon: mdiCalendarClockOutline },
  emergency: { color: 'error', variant: 'flat', icon: mdiAlertDecagramOutline },
}
export const KIND_LABELS: Record<ChangeItemDto['kind'], string> = {
  create: 'New limit',
  modify: 'Changed limit',
  retire: 'Retired limit',
  instrument: 'Changed instrument',
}
export const MEANING_LABELS: Record<string, string> = {
  approved: 'Approved',
  rejected: 'Rejected',
  implemented: 'Implemented and read back',
  closed: 'Closed after the safety review',
  reviewed_operations: 'Operations review',
  reviewed_process: 'Process review',
  reviewed_instrumentation: 'Instrumentation review',
}

/** How a field is edited and shown: its label, its unit (`eu` = the instrument's unit) and its input. */
export interface FieldSpec {
  key: string
  label: string
  input: 'number' | 'text' | 'textarea' | 'bool' | 'select' | 'list'
  unit?: 'eu' | 's' | 'min' | 'h' | 'months' | 'days'
  options?: { title: string; value: string | number | null }[]
  integer?: boolean
  optional?: boolean
}

const DEADBAND_UNIT_OPTIONS = [
  { title: 'Engineering units', value: 'eu' },
  { title: '% of span', value: 'percent_span' },
]
const RESET_OPTIONS = [
  { title: 'Nobody (not latching)', value: null },
  ...RESET_ROLES.map((r) => ({ title: ROLE_LABELS[r], value: r })),
]

/** Fields of an active limit a change may set. */
export const LIMIT_FIELDS: FieldSpec[] = [
  { key: 'setpoint', label: 'Setpoint', input: 'number', unit: 'eu' },
  { key: 'deadband', label: 'Deadband', input: 'number', unit: 'eu' },
  { key: 'deadbandUnit', label: 'Deadband unit', input: 'select', options: DEADBAND_UNIT_OPTIONS },
  { key: 'onDelaySec', label: 'On-delay', input: 'number', unit: 's' },
  { key: 'offDelaySec', label: 'Off-delay', input: 'number', unit: 's' },
  { key: 'latching', label: 'Latching', input: 'bool' },
  { key: 'resetRole', label: 'Reset by', input: 'select', options: RESET_OPTIONS },
  { key: 'badValueTrip', label: 'Trips on bad value', input: 'bool' },
  { key: 'severity', label: 'Severity', input: 'select', options: choicesOf(SEVERITY_LABELS) },
  { key: 'responseTimeMin', label: 'Time to respond', input: 'number', unit: 'min', optional: true },
  { key: 'analyticalLimit', label: 'Analytical limit', input: 'number', unit: 'eu', optional: true },
  { key: 'processSafetyTimeSec', label: 'Process safety time', input: 'number', unit: 's', optional: true },
  { key: 'requiredResponseTimeSec', label: 'Required response time', input: 'number', unit: 's', optional: true },
  { key: 'bypassPermitted', label: 'Bypass permitted', input: 'bool' },
  { key: 'maxBypassHours', label: 'Longest bypass', input: 'number', unit: 'h', optional: true },
  { key: 'compensatingMeasures', label: 'Compensating measures', input: 'list' },
  { key: 'testIntervalMonths', label: 'Test interval', input: 'number', unit: 'months', integer: true },
  { key: 'testGraceDays', label: 'Test grace period', input: 'number', unit: 'days', integer: true, optional: true },
  { key: 'action', label: 'Action', input: 'textarea' },
  { key: 'consequence', label: 'Consequence', input: 'textarea' },
  { key: 'operatorResponse', label: 'Operator response', input: 'textarea' },
  { key: 'description', label: 'Description', input: 'textarea' },
]

/** Fields of an instrument a change may set. */
export const INSTRUMENT_FIELDS: FieldSpec[] = [
  { key: 'rangeLow', label: 'Range bottom', input: 'number', unit: 'eu' },
  { key: 'rangeHigh', label: 'Range top', input: 'number', unit: 'eu' },
  { key: 'normalLow', label: 'Normal low', input: 'number', unit: 'eu', optional: true },
  { key: 'normalHigh', label: 'Normal high', input: 'number', unit: 'eu', optional: true },
  { key: 'designLow', label: 'Design low', input: 'number', unit: 'eu', optional: true },
  { key: 'designHigh', label: 'Design high', input: 'number', unit: 'eu', optional: true },
  { key: 'burnout', label: 'Burnout', input: 'select', options: choicesOf(BURNOUT_LABELS) },
  { key: 'unit', label: 'Unit', input: 'text' },
]

const ALL_FIELDS = new Map([...LIMIT_FIELDS, ...INSTRUMENT_FIELDS].map((f) => [f.key, f]))

/** Fields shown in diffs but not edited through a change (a new limit carries them all). */
const OTHER_FIELDS: FieldSpec[] = [
  { key: 'tag', label: 'Tag', input: 'text' },
  { key: 'direction', label: 'Direction', input: 'select', options: choicesOf(DIRECTION_LABELS) },
  { key: 'limitClass', label: 'Class', input: 'select', options: choicesOf(CLASS_LABELS) },
  {
    key: 'priority',
    label: 'Alarm priority',
    input: 'select',
    options: ALARM_PRIORITIES.map((p) => ({ title: DEFAULT_ALARM_PHILOSOPHY.priorities[p].label, value: p })),
  },
  { key: 'enabled', label: 'Enabled, not suppressed or shelved', input: 'bool' },
  { key: 'sil', label: 'SIL', input: 'select', options: SIL_CHOICES },
]
const DIFF_ORDER = ['tag', 'description', 'direction', 'limitClass', 'sil', 'processId', 'instrumentIds']
for (const f of OTHER_FIELDS) ALL_FIELDS.set(f.key, f)

const OTHER_LABELS: Record<string, string> = {
  tag: 'Tag',
  processId: 'Process',
  instrumentIds: 'Instruments',
  direction: 'Direction',
  limitClass: 'Class',
  sil: 'SIL',
  subsystems: 'Subsystems',
  codeSetInterval: 'Interval set by code',
  status: 'Status',
  signal: 'Input signal',
  measuredVariable: 'Measured variable',
  pressureReference: 'Pressure reference',
  deviceKind: 'Device',
  deviceDescription: 'Device description',
  model: 'Model',
}

export function fieldSpec(key: string): FieldSpec | undefined {
  return ALL_FIELDS.get(key)
}
export function fieldLabel(key: string): string {
  return ALL_FIELDS.get(key)?.label ?? OTHER_LABELS[key] ?? key
}

/** The unit shown after a value of the field (`eu` resolved to the instrument's unit). */
export function unitOf(key: string, unit: string, context: Record<string, unknown> = {}): string {
  if (key === 'deadband' && context.deadbandUnit === 'percent_span') return '% of span'
  const u = ALL_FIELDS.get(key)?.unit
  if (!u) return ''
  return u === 'eu' ? unit : u
}

/** A field value in words, with its unit. */
export function valueText(key: string, v: unknown, unit = ''): string {
  if (v === null || v === undefined || v === '') return '—'
  if (typeof v === 'boolean') return v ? 'Yes' : 'No'
  const spec = ALL_FIELDS.get(key)
  if (spec?.options) {
    const o = spec.options.find((x) => x.value === v)
    if (o) return o.title
  }
  if (key === 'signal' && typeof v === 'object' && v && 'kind' in v) return signalLabel(v as Signal)
  if (key === 'subsystems' && Array.isArray(v))
    return v.length
      ? v
          .map(
            (s: { role?: string; architecture?: string; lambdaDu?: number }) =>
              `${s.role} ${s.architecture}` +
              (typeof s.lambdaDu === 'number' ? ` λDU ${s.lambdaDu.toExponential(2)} /h` : ''),
          )
          .join('; ')
      : '—'
  if (Array.isArray(v))
    return v.length ? v.map((x) => (typeof x === 'object' ? JSON.stringify(x) : String(x))).join('; ') : '—'
  if (typeof v === 'object') return JSON.stringify(v)
  const text = typeof v === 'number' ? String(v).replace('-', '−') : String(v)
  return unit ? `${text} ${unit}` : text
}

/** Field keys of an item in a stable, readable order (the form's order first). */
export function orderedKeys(changes: Record<string, unknown>): string[] {
  const order = [...DIFF_ORDER, ...[...ALL_FIELDS.keys()].filter((k) => !DIFF_ORDER.includes(k))]
  return Object.keys(changes).sort((a, b) => {
    const ia = order.indexOf(a)
    const ib = order.indexOf(b)
    return (ia === -1 ? 999 : ia) - (ib === -1 ? 999 : ib)
  })
}

export { dateTimeIn, sizeText } from '@/format'

/** A compact date and time in a site's time zone (lists); the zone is named in the column or the title. */
export const shortDateTimeIn = (iso: string | null | undefined, timeZone: string | undefined) =>
  formatInZone(iso, timeZone, { day: 'numeric', month: 'short', year: '2-digit', hour: '2-digit', minute: '2-digit' })

/** A hash shortened for display (the full hash goes in the title). */
export const shortHash = (h: string) => (h.length > 16 ? `${h.slice(0, 8)}…${h.slice(-4)}` : h)

/** An instant as a `datetime-local` input shows it, in the site's time zone. */
export function toSiteInput(iso: string | null, timeZone: string | undefined): string {
  if (!iso) return ''
  const parts = Object.fromEntries(
    new Intl.DateTimeFormat('en-CA', {
      timeZone: timeZone ?? 'UTC',
      year: 'numeric',
      month: '2-digit',
      day: '2-digit',
      hour: '2-digit',
      minute: '2-digit',
      hourCycle: 'h23',
    })
      .formatToParts(new Date(iso))
      .map((p) => [p.type, p.value]),
  )
  return `${parts.year}-${parts.month}-${parts.day}T${parts.hour}:${parts.minute}`
}

/** A `datetime-local` value read as a time in the site's time zone; null when empty or not a date. */
export function fromSiteInput(value: string, timeZone: string | undefined): string | null {
  const m = /^(\d{4})-(\d{2})-(\d{2})T(\d{2}):(\d{2})/.exec(value)
  if (!m) return null
  const [y, mo, d, h, mi] = m.slice(1).map(Number)
  const t = new TZDate(y, mo - 1, d, h, mi, timeZone ?? 'UTC').getTime()
  return Number.isFinite(t) ? new Date(t).toISOString() : null
}

import type {
  FindingKind,
  FindingResolution,
  FindingState,
  ReconAttribute,
  RunTrigger,
} from '@shared/schemas/reconciliation.ts'

export const KIND_LABELS: Record<FindingKind, string> = {
  changed_without_moc: 'Changed without MOC',
  not_in_register: 'Not in the register',
  missing_on_device: 'Missing on the device',
  bypassed_without_authorization: 'Bypassed without authorization',
  disabled: 'Disabled without record',
  unreachable: 'Source unreachable',
}

export const KIND_HINTS: Record<FindingKind, string> = {
  changed_without_moc: 'A value on the source differs from the register and no change request puts that value.',
  not_in_register: 'The source holds a limit or alarm the register has no active limit for.',
  missing_on_device: 'An active limit of the source’s areas that the source does not hold.',
  bypassed_without_authorization: 'A bypass, force or maintenance flag is set and no active bypass is on record.',
  disabled: 'The limit is disabled or suppressed on the source and no active bypass is on record.',
  unreachable: 'The source could not be read within its timeout.',
}

export const STATE_LABELS: Record<FindingState, string> = {
  open: 'Open',
  acknowledged: 'Acknowledged',
  resolved: 'Resolved',
  accepted: 'Accepted',
}

export const STATE_COLORS: Record<FindingState, string> = {
  open: 'error',
  acknowledged: 'warning',
  resolved: 'success',
  accepted: 'secondary',
}

export const RESOLUTION_LABELS: Record<FindingResolution, string> = {
  change_request: 'by a change request (the register follows the plant)',
  device_corrected: 'by a correction on the device, confirmed by a later run (the plant follows the register)',
  accepted: 'accepted with a signed reason',
}

export const ATTRIBUTE_LABELS: Record<ReconAttribute, string> = {
  setpoint: 'Setpoint',
  deadband: 'Deadband',
  onDelaySec: 'On-delay (s)',
  offDelaySec: 'Off-delay (s)',
  priority: 'Priority',
  enabled: 'Enabled',
  latching: 'Latching',
  bypassed: 'Bypass / force flag',
}
export const attributeLabel = (a: string) => ATTRIBUTE_LABELS[a as ReconAttribute] ?? a

export const TRIGGER_LABELS: Record<RunTrigger, string> = {
  manual: 'Run now',
  schedule: 'Schedule',
  upload: 'Upload',
}

/** A value as the source or the register holds it, with its unit. */
export function valueText(v: string | null, unit: string | null): string {
  if (v === null) return '—'
  return unit ? `${v} ${unit}` : v
}

/** A difference of the limit page ("setpoint: changed_without_moc") as text. */
export function differenceText(d: string): string {
  const [attribute, kind] = d.split(': ')
  if (!kind) return KIND_LABELS[attribute as FindingKind] ?? attribute
  return `${attributeLabel(attribute)} (${KIND_LABELS[kind as FindingKind] ?? kind})`
}

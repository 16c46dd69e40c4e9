import type { AlarmStateKind } from '@shared/domain/rules/alarm-states.ts'

// Labels of the alarm screens (docs/alarms.md).

/** The alarm states, as a heading or a table cell writes them. */
export const ALARM_STATE_LABELS: Record<AlarmStateKind, string> = {
  shelved: 'Shelved',
  suppressed: 'Suppressed by design',
  out_of_service: 'Out of service',
}

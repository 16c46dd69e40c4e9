import type { TestSignal } from '@shared/domain/test-signal.ts'
import { isApiError, messageOf } from '@/api/errors'
import { getTestSignal } from './api'

// What the limit and trip-test screens show of a test signal (GET /api/limits/:id/test-signal): the request from the
// screen's choices, the answer's points and flags as text, and a refusal as a field error or a sentence.

export type SignalMode = 'mv_source' | 'tc_simulate'

/** How a thermocouple's signal is produced at the trip point. */
export const SIGNAL_MODE_ITEMS: { title: string; value: SignalMode }[] = [
  { title: 'Millivolt source at the terminals', value: 'mv_source' },
  { title: 'Thermocouple simulator (the calibrator compensates the cold junction)', value: 'tc_simulate' },
]

/** The flags of an answer, as the screen names them. */
export const SIGNAL_FLAG_LABELS: Record<string, string> = {
  alternative_out_of_range: 'A point is outside the range: it cannot be simulated',
  setpoint_outside_range: 'Setpoint outside the instrument range',
  type_b_low_end: 'Type B below 250 °C: almost no emf',
  ne43_failure_low: 'Current in the NE 43 failure band (low)',
  ne43_failure_high: 'Current in the NE 43 failure band (high)',
  ne43_uncertain_low: 'Current below the NE 43 measuring band',
  ne43_uncertain_high: 'Current above the NE 43 measuring band',
  ne43_under_range: 'Current under range (below 4 mA)',
  ne43_over_range: 'Current over range (above 20 mA)',
}
export const signalFlagText = (f: string) => SIGNAL_FLAG_LABELS[f] ?? f.replaceAll('_', ' ')

/** A unit of the answer: `eu` is the limit's engineering unit. */
export const signalUnitText = (u: string, engineeringUnit: string) =>
  u === 'eu' ? engineeringUnit : u === 'ohm' ? 'Ω' : u

/** One row per point: a point given in engineering units and in the signal unit has both values. */
export function signalPoints(result: TestSignal | null, show: (v: number) => string, engineeringUnit: string) {
  const rows: { label: string; values: string[] }[] = []
  for (const a of result?.alternatives ?? []) {
    const text = `${show(a.value)} ${signalUnitText(a.unit, engineeringUnit)}`
    const row = rows.find((r) => r.label === a.label)
    if (row) row.values.push(text)
    else rows.push({ label: a.label, values: [text] })
  }
  return rows
}

/** Asks for the signal; the mode and the cold junction (°C, '' when not given) count for a thermocouple only. */
export function askTestSignal(limitId: number, thermocouple: boolean, mode: SignalMode, coldJunction: string) {
  return getTestSignal(limitId, {
    mode: thermocouple ? mode : undefined,
    coldJunction: thermocouple && coldJunction !== '' ? Number(coldJunction) : undefined,
  })
}

/** A refused request: the cold junction's field errors, or a sentence for the panel. */
export function signalRefusal(e: unknown): { field: string[]; message: string } {
  if (isApiError(e) && e.fields.coldJunction) return { field: e.fields.coldJunction, message: '' }
  if (isApiError(e) && e.status === 422) return { field: [], message: `This cannot be simulated: ${e.message}` }
  return { field: [], message: messageOf(e) }
}

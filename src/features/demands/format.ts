import type { DemandDto } from '@shared/schemas/demands.ts'

/** One line under each kind of event in the record form (docs/demands.md#kinds-of-event). */
export const KIND_HINTS: Record<DemandDto['kind'], string> = {
  real_demand: 'The process reached the trip; say whether the function acted',
  spurious_trip: 'The function tripped without a process demand; give the cause',
  dangerous_failure: 'Found in operation, by diagnostics or a walk-round, not at a test',
  failure_on_demand: 'A device of the function failed when demanded (the vote may still have acted)',
}

/** Short kind names for chips and table cells. */
export const KIND_SHORT: Record<DemandDto['kind'], string> = {
  real_demand: 'Real demand',
  spurious_trip: 'Spurious trip',
  dangerous_failure: 'Dangerous failure',
  failure_on_demand: 'Failure on demand',
}

export const KIND_COLOR: Record<DemandDto['kind'], string> = {
  real_demand: 'primary',
  spurious_trip: 'warning',
  dangerous_failure: 'error',
  failure_on_demand: 'error',
}

/** What a real demand did, or '—'. */
export function outcomeText(d: Pick<DemandDto, 'kind' | 'outcome'>): string {
  if (d.kind !== 'real_demand' || !d.outcome) return '—'
  return d.outcome === 'acted' ? 'Acted' : 'FAILED TO ACT'
}

/** The review state of an event in a few words. */
export function reviewText(d: Pick<DemandDto, 'status' | 'counts' | 'creditedAsTest'>): string {
  if (d.status === 'recorded') return 'To classify'
  if (d.creditedAsTest) return 'Credited as proof test'
  return d.counts ? 'Counts' : 'Does not count'
}

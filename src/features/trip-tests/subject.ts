import { subject } from '@casl/ability'

/** Ability subjects of the trip-test screens, e.g. `can('record', tripTestAt(siteId))`. */
export function tripTestAt(siteId: number): Record<string, unknown> {
  const fields: Record<string, unknown> = { siteId }
  return subject('TripTest', fields)
}

/** A site, for `can('update', site(id))` (administrators of that site). */
export function site(id: number): Record<string, unknown> {
  const fields: Record<string, unknown> = { id }
  return subject('Site', fields)
}

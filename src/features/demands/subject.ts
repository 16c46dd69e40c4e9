import { subject } from '@casl/ability'

/** The ability subject of the demand log at a site, e.g. `can('record', demandAt(siteId))`. */
export function demandAt(siteId: number): Record<string, unknown> {
  const fields: Record<string, unknown> = { siteId }
  return subject('Demand', fields)
}

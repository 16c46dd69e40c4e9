import { subject } from '@casl/ability'
import type { SubjectName } from '@shared/abilities/index.ts'

/** A site-scoped subject for ability checks, e.g. `can('update', onSite('Limit', limit.siteId))`. */
export function onSite(name: Exclude<SubjectName, 'all'>, siteId: number): Record<string, unknown> {
  const fields: Record<string, unknown> = { siteId }
  return subject(name, fields)
}

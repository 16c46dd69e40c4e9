import { subject } from '@casl/ability'

/** A site-scoped subject for ability checks, e.g. `can('authorize', atSite('Bypass', b.siteId))`. */
export function atSite(name: 'Bypass' | 'BypassReview', siteId: number): Record<string, unknown> {
  const fields: Record<string, unknown> = { siteId }
  return subject(name, fields)
}

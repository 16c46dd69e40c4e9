import { subject } from '@casl/ability'

/**
 * The subject of a change request for ability checks: site, proposer, editors and type (separation of duties needs
 * them all).
 */
export function changeSubject(fields: {
  siteId: number
  proposerId?: number
  editorIds?: number[]
  type?: string
}): Record<string, unknown> {
  return subject('ChangeRequest', { ...fields }) as unknown as Record<string, unknown>
}

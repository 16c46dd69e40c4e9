import { createHash } from 'node:crypto'
import canonicalize from 'canonicalize'
import type { Discipline } from '../../../shared/schemas/change-requests.ts'

/** SHA-256 over the RFC 8785 canonical JSON of what is signed. */
export function contentHash(content: unknown): string {
  const text = canonicalize(JSON.parse(JSON.stringify(content ?? null)))
  return createHash('sha256')
    .update(text ?? 'null', 'utf8')
    .digest('hex')
}

export type Meaning =
  | 'approved'
  | 'rejected'
  | 'implemented'
  | 'closed'
  | 'authorized'
  | 'performed'
  | 'witnessed'
  | 'accepted'
  | 'acknowledged'
  | 'returned_to_service'
  | `reviewed_${Discipline}`

// the queries are in signatures.repository.ts; callers import them from here as before
export { insertSignature, listSignatures, voidSignatures } from './signatures.repository.ts'

import { createHash } from 'node:crypto'
import canonicalize from 'canonicalize'
import type { Selectable, Transaction } from 'kysely'
import type { Clock } from '../../clock.ts'
import type { Database, SignatureTable } from '../../db/schema.ts'
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
import { insertSignature } from './signatures.repository.ts'
export { insertSignature }
export { listSignatures, voidSignatures } from './signatures.repository.ts'

/** Signs an entity's content (its hash) as the signer whose password was just verified. */
export function signAs(
  trx: Transaction<Database>,
  clock: Clock,
  signer: { id: number; name: string },
  s: {
    entityType: string
    entityId: number
    itemId?: number | null
    meaning: Meaning
    contentHash: string
    comment?: string
  },
) {
  return insertSignature(trx, clock, { ...s, userId: signer.id, name: signer.name })
}

/** What every signature on a record says in the API: who signed what, when, with what meaning. */
export function signatureDto(
  s: Pick<Selectable<SignatureTable>, 'id' | 'user_id' | 'name' | 'meaning' | 'at' | 'content_hash'>,
) {
  return {
    id: s.id,
    userId: s.user_id,
    name: s.name,
    meaning: s.meaning,
    at: s.at.toISOString(),
    contentHash: s.content_hash,
  }
}

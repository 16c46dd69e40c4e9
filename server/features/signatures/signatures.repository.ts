import type { Kysely, Transaction } from 'kysely'
import type { Database } from '../../db/schema.ts'
import type { Clock } from '../../clock.ts'
import type { Meaning } from './signatures.ts'

// Every query of electronic signatures (docs/security.md).

type Q = Kysely<Database> | Transaction<Database>

/** Records an electronic signature (21 CFR 11.50: name, time, meaning; plus the hash of the exact content signed). */
export async function insertSignature(
  trx: Transaction<Database>,
  clock: Clock,
  s: {
    entityType: string
    entityId: number
    itemId?: number | null
    userId: number
    name: string
    meaning: Meaning
    contentHash: string
    comment?: string
  },
) {
  return trx
    .insertInto('signature')
    .values({
      entity_type: s.entityType,
      entity_id: s.entityId,
      item_id: s.itemId ?? null,
      user_id: s.userId,
      name: s.name,
      meaning: s.meaning,
      at: clock.now(),
      content_hash: s.contentHash,
      comment: s.comment ?? '',
    })
    .returning(['id', 'at'])
    .executeTakeFirstOrThrow()
}

/** Voids the open signatures of a record (its content changed); they stay on record with the reason. */
export async function voidSignatures(
  trx: Transaction<Database>,
  clock: Clock,
  entityType: string,
  entityId: number,
  reason: string,
  meanings?: Meaning[],
) {
  let q = trx
    .updateTable('signature')
    .set({ voided_at: clock.now(), void_reason: reason })
    .where('entity_type', '=', entityType)
    .where('entity_id', '=', entityId)
    .where('voided_at', 'is', null)
  if (meanings?.length) q = q.where('meaning', 'in', meanings)
  const res = await q.executeTakeFirst()
  return Number(res.numUpdatedRows)
}

export function listSignatures(db: Q, entityType: string, entityIds: number[]) {
  if (!entityIds.length) return Promise.resolve([])
  return db
    .selectFrom('signature')
    .selectAll()
    .where('entity_type', '=', entityType)
    .where('entity_id', 'in', entityIds)
    .orderBy('id')
    .execute()
}

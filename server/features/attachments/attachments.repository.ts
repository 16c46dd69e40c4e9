import type { Insertable, Kysely, Transaction } from 'kysely'
import type { AttachmentTable, Database } from '../../db/schema.ts'

// Every query of attachments: files stored in PostgreSQL beside the record they belong to (docs/security.md).

type Q = Kysely<Database> | Transaction<Database>

export function insertAttachment(trx: Transaction<Database>, values: Insertable<AttachmentTable>) {
  return trx
    .insertInto('attachment')
    .values(values)
    .returning(['id', 'file_name', 'content_type', 'size_bytes', 'sha256'])
    .executeTakeFirstOrThrow()
}

/** The attachments of a record, oldest first, with the uploader's name (no content). */
export function listAttachments(db: Q, entityType: string, entityId: number) {
  return db
    .selectFrom('attachment')
    .leftJoin('app_user', 'app_user.id', 'attachment.uploaded_by')
    .select([
      'attachment.id',
      'attachment.file_name',
      'attachment.content_type',
      'attachment.size_bytes',
      'attachment.uploaded_at',
      'attachment.sha256',
      'app_user.display_name',
    ])
    .where('entity_type', '=', entityType)
    .where('entity_id', '=', entityId)
    .orderBy('attachment.id')
    .execute()
}

/** One attachment of the record, content included. */
export function findAttachment(db: Q, entityType: string, entityId: number, id: number) {
  return db
    .selectFrom('attachment')
    .selectAll()
    .where('id', '=', id)
    .where('entity_type', '=', entityType)
    .where('entity_id', '=', entityId)
    .executeTakeFirst()
}

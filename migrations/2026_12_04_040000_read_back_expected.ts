import { type Kysely, sql } from 'kysely'

// What implementation reads back beyond the changed fields: the alarm priority and the enabled state the device must
// hold after the change (docs/change-requests.md#implementation-and-read-back).
export async function up(db: Kysely<any>): Promise<void> {
  await sql`ALTER TABLE change_request_item ADD COLUMN read_back_expected jsonb`.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`ALTER TABLE change_request_item DROP COLUMN read_back_expected`.execute(db)
}

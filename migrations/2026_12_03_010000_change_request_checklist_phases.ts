import { type Kysely, sql } from 'kysely'

// The readiness checklist of a change in two groups (before implementation, close-out): an item may be marked not
// applicable, with its reason in the note.
export async function up(db: Kysely<any>): Promise<void> {
  await sql`ALTER TABLE change_request_check ADD COLUMN not_applicable boolean NOT NULL DEFAULT false`.execute(db)
  await sql`ALTER TABLE change_request_check ADD CONSTRAINT change_request_check_reason
    CHECK (NOT not_applicable OR note <> '')`.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`ALTER TABLE change_request_check DROP COLUMN not_applicable`.execute(db)
}

import { type Kysely, sql } from 'kysely'

// A reversal links the temporary change it restores (docs/change-requests.md#expired-temporary-changes); the daily
// notice of an expired, unreverted temporary change records when it was last sent.
export async function up(db: Kysely<any>): Promise<void> {
  await sql`ALTER TABLE change_request
    ADD COLUMN reverses_id integer REFERENCES change_request(id),
    ADD COLUMN expired_notice_at timestamptz(3)`.execute(db)
  await sql`CREATE INDEX change_request_reverses_idx ON change_request (reverses_id) WHERE reverses_id IS NOT NULL`.execute(
    db,
  )
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`DROP INDEX change_request_reverses_idx`.execute(db)
  await sql`ALTER TABLE change_request DROP COLUMN reverses_id, DROP COLUMN expired_notice_at`.execute(db)
}

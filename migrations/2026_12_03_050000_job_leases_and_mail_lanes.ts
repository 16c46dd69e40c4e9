import { type Kysely, sql } from 'kysely'

// Job leases name their holder (a lease is renewed and released only by the instance that took it), and mail gets
// a priority lane: urgent messages (protection lost now) are delivered before the rest of a backlog.
export async function up(db: Kysely<any>): Promise<void> {
  await sql`
    ALTER TABLE job_schedule ADD COLUMN lease_owner text;
    ALTER TABLE mail_outbox ADD COLUMN priority smallint NOT NULL DEFAULT 1 CHECK (priority IN (0, 1));
    CREATE INDEX mail_outbox_lane_idx ON mail_outbox (priority, id) WHERE sent_at IS NULL;
  `.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`
    DROP INDEX IF EXISTS mail_outbox_lane_idx;
    ALTER TABLE mail_outbox DROP COLUMN IF EXISTS priority;
    ALTER TABLE job_schedule DROP COLUMN IF EXISTS lease_owner;
  `.execute(db)
}

import { type Kysely, sql } from 'kysely'

// Discipline reviews of a change request (docs/change-requests.md#discipline-reviews): the disciplines the site policy
// named when the request was written, and the reviewers' signatures (`reviewed_<discipline>`), one open per
// discipline and request.
export async function up(db: Kysely<any>): Promise<void> {
  await sql`ALTER TABLE change_request ADD COLUMN reviews_required text[] NOT NULL DEFAULT '{}'
    CHECK (reviews_required <@ ARRAY['operations','process','instrumentation']::text[])`.execute(db)
  await sql`
    ALTER TABLE signature DROP CONSTRAINT IF EXISTS signature_meaning_check;
    ALTER TABLE signature ADD CONSTRAINT signature_meaning_check CHECK (meaning IN ('approved','rejected',
      'implemented','closed','authorized','performed','witnessed','accepted','acknowledged','returned_to_service',
      'reviewed_operations','reviewed_process','reviewed_instrumentation'));
    CREATE UNIQUE INDEX signature_one_review_per_discipline ON signature (entity_type, entity_id, meaning)
      WHERE voided_at IS NULL AND meaning IN ('reviewed_operations','reviewed_process','reviewed_instrumentation');
  `.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`
    DROP INDEX IF EXISTS signature_one_review_per_discipline;
    DELETE FROM signature WHERE meaning IN ('reviewed_operations','reviewed_process','reviewed_instrumentation');
    ALTER TABLE signature DROP CONSTRAINT IF EXISTS signature_meaning_check;
    ALTER TABLE signature ADD CONSTRAINT signature_meaning_check CHECK (meaning IN ('approved','rejected',
      'implemented','closed','authorized','performed','witnessed','accepted','acknowledged','returned_to_service'));
  `.execute(db)
  await sql`ALTER TABLE change_request DROP COLUMN reviews_required`.execute(db)
}

import { type Kysely, sql } from 'kysely'

// History import (docs/trip-tests.md#history-import): an import batch is a register file or a history file; trip tests
// and bypasses brought from a former system are marked imported and name the batch (its file name and SHA-256), and
// imported tests carry the tester's name as text (imported people need not be users). The commissioning date of a
// limit (limit_function.commissioned_at) already exists.
export async function up(db: Kysely<any>): Promise<void> {
  await sql`ALTER TABLE import_batch
    ADD COLUMN kind text NOT NULL DEFAULT 'register' CHECK (kind IN ('register', 'history'))`.execute(db)
  await sql`ALTER TABLE trip_test
    ADD COLUMN source text NOT NULL DEFAULT 'recorded' CHECK (source IN ('recorded', 'imported')),
    ADD COLUMN import_batch_id integer REFERENCES import_batch (id),
    ADD COLUMN tester_name text,
    ADD CONSTRAINT trip_test_imported_batch CHECK ((source = 'imported') = (import_batch_id IS NOT NULL))`.execute(db)
  await sql`ALTER TABLE bypass
    ADD COLUMN source text NOT NULL DEFAULT 'recorded' CHECK (source IN ('recorded', 'imported')),
    ADD COLUMN import_batch_id integer REFERENCES import_batch (id),
    ADD CONSTRAINT bypass_imported_batch CHECK ((source = 'imported') = (import_batch_id IS NOT NULL))`.execute(db)
  await sql`CREATE INDEX trip_test_import_batch_idx ON trip_test (import_batch_id) WHERE import_batch_id IS NOT NULL`.execute(
    db,
  )
  await sql`CREATE INDEX bypass_import_batch_idx ON bypass (import_batch_id) WHERE import_batch_id IS NOT NULL`.execute(
    db,
  )
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`ALTER TABLE bypass DROP COLUMN source, DROP COLUMN import_batch_id`.execute(db)
  await sql`ALTER TABLE trip_test DROP COLUMN source, DROP COLUMN import_batch_id, DROP COLUMN tester_name`.execute(db)
  await sql`ALTER TABLE import_batch DROP COLUMN kind`.execute(db)
}

import { type Kysely, sql } from 'kysely'

// Sign-in throttling as one atomic step: a row per key (an account at an address, an address, an account from
// unknown addresses), locked FOR UPDATE while an attempt is counted, before the password is checked.
export async function up(db: Kysely<any>): Promise<void> {
  await sql`
    CREATE TABLE sign_in_throttle (
      key text PRIMARY KEY,
      failures integer NOT NULL DEFAULT 0 CHECK (failures >= 0),
      last_failure_at timestamptz(3),
      blocked_until timestamptz(3)
    );
    ALTER TABLE sign_in_attempt DROP CONSTRAINT IF EXISTS sign_in_attempt_purpose_check;
    ALTER TABLE sign_in_attempt ADD CONSTRAINT sign_in_attempt_purpose_check
      CHECK (purpose IN ('sign_in', 'signature', 'password_change'));
    CREATE INDEX sign_in_attempt_known_idx ON sign_in_attempt (lower(email), ip, at) WHERE success;
  `.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`
    DROP INDEX IF EXISTS sign_in_attempt_known_idx;
    DROP TABLE IF EXISTS sign_in_throttle;
  `.execute(db)
}

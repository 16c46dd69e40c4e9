import { type Kysely, sql } from 'kysely'

// Trip tests: what the test covered (the whole function or one component), the result per channel of a voted
// function, the precautions taken and the return-to-service check; degraded limits: the repair deadline held against
// the function's MTTR, the plant manager's approval beyond it and the escalation of a passed deadline; test
// deferrals with their risk assessment and signed decision.
export async function up(db: Kysely<any>): Promise<void> {
  await sql`
    ALTER TABLE trip_test
      ADD COLUMN scope text NOT NULL DEFAULT 'function'
        CHECK (scope IN ('function','sensor','logic_solver','final_element','valve_leak','partial_stroke')),
      ADD COLUMN channels jsonb NOT NULL DEFAULT '[]'::jsonb,
      ADD COLUMN voting jsonb,
      ADD COLUMN closing_time_sec numeric CHECK (closing_time_sec >= 0),
      ADD COLUMN leak_test_passed boolean,
      ADD COLUMN stroke_percent numeric CHECK (stroke_percent > 0 AND stroke_percent <= 100),
      ADD COLUMN precautions jsonb NOT NULL DEFAULT '{}'::jsonb;
    ALTER TABLE trip_test DROP CONSTRAINT IF EXISTS trip_test_as_found_result_check;
    ALTER TABLE trip_test ADD CONSTRAINT trip_test_as_found_result_check
      CHECK (as_found_result IN ('in_tolerance','out_safe','out_dangerous','no_trip','not_applicable'));
    ALTER TABLE trip_test DROP CONSTRAINT IF EXISTS trip_test_as_left_result_check;
    ALTER TABLE trip_test ADD CONSTRAINT trip_test_as_left_result_check
      CHECK (as_left_result IN ('in_tolerance','out','not_applicable'));
    CREATE INDEX trip_test_limit_scope_idx ON trip_test (limit_id, scope, performed_at DESC);

    ALTER TABLE signature DROP CONSTRAINT IF EXISTS signature_meaning_check;
    ALTER TABLE signature ADD CONSTRAINT signature_meaning_check CHECK (meaning IN ('approved','rejected',
      'implemented','closed','authorized','performed','witnessed','accepted','acknowledged','returned_to_service'));
    DROP INDEX IF EXISTS signature_one_approval_per_person;
    CREATE UNIQUE INDEX signature_one_approval_per_person ON signature (entity_type, entity_id, user_id, meaning)
      WHERE voided_at IS NULL AND meaning IN ('approved','witnessed','performed','accepted','returned_to_service');

    ALTER TABLE limit_degradation
      ADD COLUMN mttr_hours numeric,
      ADD COLUMN deadline_beyond_mttr boolean NOT NULL DEFAULT false,
      ADD COLUMN deadline_approved_by integer REFERENCES app_user (id),
      ADD COLUMN deadline_approved_at timestamptz(3),
      ADD COLUMN escalated_at timestamptz(3);

    CREATE TABLE test_deferral (
      id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
      limit_id integer NOT NULL REFERENCES limit_function (id),
      site_id integer NOT NULL REFERENCES site (id),
      status text NOT NULL DEFAULT 'requested' CHECK (status IN ('requested','approved','rejected','lapsed')),
      original_due_date date NOT NULL,
      new_due_date date NOT NULL CHECK (new_due_date > original_due_date),
      reason text NOT NULL,
      compensating_measures jsonb NOT NULL,
      risk jsonb NOT NULL,
      required_role text NOT NULL,
      content_hash char(64) NOT NULL,
      requested_by integer NOT NULL REFERENCES app_user (id),
      requested_at timestamptz(3) NOT NULL,
      decided_by integer REFERENCES app_user (id),
      decided_at timestamptz(3),
      decision_comment text NOT NULL DEFAULT ''
    );
    CREATE INDEX test_deferral_limit_idx ON test_deferral (limit_id, requested_at DESC);
    CREATE INDEX test_deferral_site_idx ON test_deferral (site_id, requested_at DESC);
    CREATE UNIQUE INDEX test_deferral_one_requested ON test_deferral (limit_id) WHERE status = 'requested';

    CREATE TABLE component_test_interval (
      limit_id integer NOT NULL REFERENCES limit_function (id),
      scope text NOT NULL CHECK (scope IN ('sensor','logic_solver','final_element','valve_leak','partial_stroke')),
      interval_months integer NOT NULL CHECK (interval_months BETWEEN 1 AND 240),
      PRIMARY KEY (limit_id, scope)
    );
  `.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`
    DROP TABLE IF EXISTS component_test_interval, test_deferral;
    ALTER TABLE limit_degradation DROP COLUMN IF EXISTS mttr_hours, DROP COLUMN IF EXISTS deadline_beyond_mttr,
      DROP COLUMN IF EXISTS deadline_approved_by, DROP COLUMN IF EXISTS deadline_approved_at,
      DROP COLUMN IF EXISTS escalated_at;
    ALTER TABLE trip_test DROP COLUMN IF EXISTS scope, DROP COLUMN IF EXISTS channels, DROP COLUMN IF EXISTS voting,
      DROP COLUMN IF EXISTS closing_time_sec, DROP COLUMN IF EXISTS leak_test_passed,
      DROP COLUMN IF EXISTS stroke_percent, DROP COLUMN IF EXISTS precautions;
  `.execute(db)
}

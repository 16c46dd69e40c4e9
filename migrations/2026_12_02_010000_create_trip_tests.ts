import { type Kysely, sql } from 'kysely'

// Trip tests (proof tests of one limit), degraded limits with their compensating measures, the test schedule kept on
// the limit for filtering, and a log of digests sent.
export async function up(db: Kysely<any>): Promise<void> {
  await sql`
    CREATE TABLE trip_test (
      id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
      limit_id integer NOT NULL REFERENCES limit_function (id),
      site_id integer NOT NULL REFERENCES site (id),
      limit_revision integer NOT NULL,
      kind text NOT NULL CHECK (kind IN ('full','partial')),
      method text NOT NULL CHECK (method IN ('injection','process','setpoint_lowered','reference_gauge')),
      injection_point text CHECK (injection_point IN ('sensor','transmitter_output')),
      source_mode text CHECK (source_mode IN ('mv_source','tc_simulate')),
      cold_junction_c numeric,
      procedure_ref text NOT NULL DEFAULT '',
      device_serial text NOT NULL DEFAULT '',
      calibrator_id text NOT NULL DEFAULT '',
      calibrator_due_date date,
      work_order text NOT NULL DEFAULT '',
      bypass_id integer,
      performed_at timestamptz(3) NOT NULL,
      setpoint numeric NOT NULL,
      tolerance numeric NOT NULL CHECK (tolerance >= 0),
      tolerance_unit text NOT NULL CHECK (tolerance_unit IN ('eu','percent_span')),
      tolerance_eu numeric NOT NULL,
      as_found numeric,
      as_found_signal jsonb,
      as_found_result text NOT NULL CHECK (as_found_result IN ('in_tolerance','out_safe','out_dangerous','no_trip')),
      as_left numeric,
      as_left_result text NOT NULL CHECK (as_left_result IN ('in_tolerance','out')),
      reset_value numeric,
      latch_held boolean,
      reset_refused_while_active boolean,
      reset_accepted_after_return boolean,
      final_element_ok boolean,
      response_time_sec numeric,
      setpoint_restored_read_back numeric,
      passed boolean NOT NULL,
      fail_reasons jsonb NOT NULL DEFAULT '[]'::jsonb,
      notes text NOT NULL DEFAULT '',
      status text NOT NULL DEFAULT 'recorded' CHECK (status IN ('recorded','signed','completed')),
      content_hash char(64) NOT NULL,
      recorded_by integer NOT NULL REFERENCES app_user (id),
      created_at timestamptz(3) NOT NULL,
      updated_at timestamptz(3) NOT NULL
    );
    CREATE INDEX trip_test_limit_idx ON trip_test (limit_id, performed_at DESC);
    CREATE INDEX trip_test_site_idx ON trip_test (site_id, performed_at DESC);

    CREATE TABLE limit_degradation (
      id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
      limit_id integer NOT NULL REFERENCES limit_function (id),
      test_id integer NOT NULL REFERENCES trip_test (id),
      opened_at timestamptz(3) NOT NULL,
      reasons jsonb NOT NULL,
      compensating_measures jsonb,
      repair_deadline date,
      measures_signed_by integer REFERENCES app_user (id),
      measures_signed_at timestamptz(3),
      cleared_at timestamptz(3),
      cleared_by_test_id integer REFERENCES trip_test (id)
    );
    CREATE UNIQUE INDEX limit_degradation_one_open ON limit_degradation (limit_id) WHERE cleared_at IS NULL;

    ALTER TABLE limit_function
      ADD COLUMN test_status text NOT NULL DEFAULT 'never_tested' CHECK (test_status IN ('never_tested','ok','due_soon','in_grace','overdue')),
      ADD COLUMN test_due_date date,
      ADD COLUMN last_full_pass date;
    CREATE INDEX limit_function_test_status_idx ON limit_function (site_id, test_status);

    CREATE TABLE digest_log (
      site_id integer NOT NULL REFERENCES site (id),
      kind text NOT NULL,
      period text NOT NULL,
      sent_at timestamptz(3) NOT NULL,
      PRIMARY KEY (site_id, kind, period)
    );
  `.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`
    DROP TABLE IF EXISTS digest_log, limit_degradation, trip_test CASCADE;
    ALTER TABLE limit_function DROP COLUMN IF EXISTS test_status, DROP COLUMN IF EXISTS test_due_date, DROP COLUMN IF EXISTS last_full_pass;
  `.execute(db)
}

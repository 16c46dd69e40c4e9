import { type Kysely, sql } from 'kysely'

// The demand and trip log of a limit (real demands, spurious trips, dangerous failures found outside a test,
// failures on demand), the rates assumed in the hazard study for SIL-rated limits, the commissioning date of a limit
// and the model of an instrument (for observed failure rates per model).
export async function up(db: Kysely<any>): Promise<void> {
  await sql`
    CREATE TABLE demand (
      id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
      site_id integer NOT NULL REFERENCES site(id),
      limit_id integer NOT NULL REFERENCES limit_function(id),
      instrument_id integer REFERENCES instrument(id),
      kind text NOT NULL CHECK (kind IN ('real_demand','spurious_trip','dangerous_failure','failure_on_demand')),
      outcome text CHECK (outcome IN ('acted','failed_to_act')),
      occurred_at timestamptz(3) NOT NULL,
      description text NOT NULL,
      cause text NOT NULL DEFAULT '',
      evidence text NOT NULL DEFAULT '',
      work_order text NOT NULL DEFAULT '',
      whole_function boolean NOT NULL DEFAULT false,
      status text NOT NULL DEFAULT 'recorded' CHECK (status IN ('recorded','classified')),
      counts boolean,
      dangerous_undetected boolean,
      classification_note text NOT NULL DEFAULT '',
      classified_by integer REFERENCES app_user(id),
      classified_at timestamptz(3),
      credited_as_test boolean NOT NULL DEFAULT false,
      credit_note text NOT NULL DEFAULT '',
      credited_by integer REFERENCES app_user(id),
      credited_at timestamptz(3),
      imported boolean NOT NULL DEFAULT false,
      recorded_by integer NOT NULL REFERENCES app_user(id),
      created_at timestamptz(3) NOT NULL,
      updated_at timestamptz(3) NOT NULL,
      CHECK ((kind = 'real_demand') = (outcome IS NOT NULL)),
      CHECK (NOT credited_as_test OR (kind = 'real_demand' AND outcome = 'acted' AND whole_function))
    );
    CREATE INDEX demand_site_occurred ON demand (site_id, occurred_at DESC, id DESC);
    CREATE INDEX demand_limit_occurred ON demand (limit_id, occurred_at DESC);
    REVOKE DELETE, TRUNCATE ON demand FROM limitkeeper_app;
    ALTER TABLE limit_function
      ADD COLUMN assumed_demand_rate_per_year numeric CHECK (assumed_demand_rate_per_year >= 0),
      ADD COLUMN assumed_spurious_rate_per_year numeric CHECK (assumed_spurious_rate_per_year >= 0),
      ADD COLUMN commissioned_at date;
    ALTER TABLE instrument ADD COLUMN model text NOT NULL DEFAULT '';
  `.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`
    ALTER TABLE instrument DROP COLUMN IF EXISTS model;
    ALTER TABLE limit_function
      DROP COLUMN IF EXISTS assumed_demand_rate_per_year,
      DROP COLUMN IF EXISTS assumed_spurious_rate_per_year,
      DROP COLUMN IF EXISTS commissioned_at;
    DROP TABLE IF EXISTS demand;
  `.execute(db)
}

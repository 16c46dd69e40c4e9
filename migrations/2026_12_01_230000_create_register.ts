import { type Kysely, sql } from 'kysely'

// The register: processes, instruments and limit functions with their revision history, and import batches.
export async function up(db: Kysely<any>): Promise<void> {
  await sql`
    CREATE TABLE process (
      id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
      area_id integer NOT NULL REFERENCES area (id),
      site_id integer NOT NULL REFERENCES site (id),
      name text NOT NULL,
      description text NOT NULL DEFAULT '',
      created_at timestamptz(3) NOT NULL,
      updated_at timestamptz(3) NOT NULL,
      UNIQUE (area_id, name)
    );
    CREATE INDEX process_site_idx ON process (site_id);

    CREATE TABLE instrument (
      id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
      process_id integer NOT NULL REFERENCES process (id),
      area_id integer NOT NULL REFERENCES area (id),
      site_id integer NOT NULL REFERENCES site (id),
      tag text NOT NULL,
      measured_variable text NOT NULL CHECK (measured_variable IN ('temperature','pressure','level','flow','analytical','other')),
      unit text NOT NULL,
      pressure_reference text CHECK (pressure_reference IN ('gauge','absolute','differential')),
      range_low numeric NOT NULL,
      range_high numeric NOT NULL,
      normal_low numeric,
      normal_high numeric,
      design_low numeric,
      design_high numeric,
      burnout text NOT NULL CHECK (burnout IN ('upscale','downscale','none')),
      signal jsonb NOT NULL,
      device_kind text NOT NULL CHECK (device_kind IN ('limit_controller','safety_plc','control_system','indicator','switch','other')),
      device_description text NOT NULL DEFAULT '',
      revision integer NOT NULL DEFAULT 1,
      created_at timestamptz(3) NOT NULL,
      updated_at timestamptz(3) NOT NULL,
      CHECK (range_high > range_low)
    );
    CREATE UNIQUE INDEX instrument_site_tag_key ON instrument (site_id, lower(tag));
    CREATE INDEX instrument_process_idx ON instrument (process_id);

    CREATE TABLE limit_function (
      id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
      process_id integer NOT NULL REFERENCES process (id),
      area_id integer NOT NULL REFERENCES area (id),
      site_id integer NOT NULL REFERENCES site (id),
      primary_instrument_id integer NOT NULL REFERENCES instrument (id),
      tag text NOT NULL,
      description text NOT NULL DEFAULT '',
      direction text NOT NULL CHECK (direction IN ('high','low')),
      limit_class text NOT NULL CHECK (limit_class IN ('alarm','trip')),
      setpoint numeric NOT NULL,
      deadband numeric NOT NULL DEFAULT 0 CHECK (deadband >= 0),
      deadband_unit text NOT NULL DEFAULT 'eu' CHECK (deadband_unit IN ('eu','percent_span')),
      on_delay_sec numeric NOT NULL DEFAULT 0 CHECK (on_delay_sec >= 0),
      off_delay_sec numeric NOT NULL DEFAULT 0 CHECK (off_delay_sec >= 0),
      latching boolean NOT NULL DEFAULT false,
      reset_role text,
      bad_value_trip boolean NOT NULL DEFAULT false,
      action text NOT NULL DEFAULT '',
      consequence text NOT NULL DEFAULT '',
      operator_response text NOT NULL DEFAULT '',
      response_time_min numeric,
      severity text NOT NULL CHECK (severity IN ('minor','moderate','major','severe')),
      priority text CHECK (priority IN ('low','medium','high','critical')),
      priority_explanation text NOT NULL DEFAULT '',
      analytical_limit numeric,
      process_safety_time_sec numeric,
      required_response_time_sec numeric,
      bypass_permitted boolean NOT NULL DEFAULT true,
      max_bypass_hours numeric,
      compensating_measures jsonb NOT NULL DEFAULT '[]'::jsonb,
      test_interval_months integer NOT NULL CHECK (test_interval_months > 0),
      test_grace_days integer,
      code_set_interval boolean NOT NULL DEFAULT false,
      sil smallint CHECK (sil IN (1,2,3)),
      subsystems jsonb NOT NULL DEFAULT '[]'::jsonb,
      status text NOT NULL DEFAULT 'proposed' CHECK (status IN ('proposed','active','retired')),
      revision integer NOT NULL DEFAULT 1,
      protection_state text NOT NULL DEFAULT 'in_service' CHECK (protection_state IN ('in_service','bypassed','degraded')),
      window_errors jsonb NOT NULL DEFAULT '[]'::jsonb,
      window_warnings jsonb NOT NULL DEFAULT '[]'::jsonb,
      has_window_errors boolean GENERATED ALWAYS AS (jsonb_array_length(window_errors) > 0) STORED,
      has_window_warnings boolean GENERATED ALWAYS AS (jsonb_array_length(window_warnings) > 0) STORED,
      search_text text GENERATED ALWAYS AS (lower(tag || ' ' || description)) STORED,
      created_by integer REFERENCES app_user (id),
      created_at timestamptz(3) NOT NULL,
      updated_at timestamptz(3) NOT NULL
    );
    CREATE UNIQUE INDEX limit_function_site_tag_key ON limit_function (site_id, lower(tag));
    CREATE INDEX limit_function_site_tag_idx ON limit_function (site_id, tag, id);
    CREATE INDEX limit_function_tag_idx ON limit_function (tag, id);
    CREATE INDEX limit_function_area_idx ON limit_function (area_id, tag);
    CREATE INDEX limit_function_process_idx ON limit_function (process_id);
    CREATE INDEX limit_function_instrument_idx ON limit_function (primary_instrument_id);
    CREATE INDEX limit_function_search_idx ON limit_function USING gin (search_text gin_trgm_ops);

    CREATE TABLE limit_instrument (
      limit_id integer NOT NULL REFERENCES limit_function (id) ON DELETE CASCADE,
      position smallint NOT NULL,
      instrument_id integer NOT NULL REFERENCES instrument (id),
      PRIMARY KEY (limit_id, position),
      UNIQUE (limit_id, instrument_id)
    );
    CREATE INDEX limit_instrument_instrument_idx ON limit_instrument (instrument_id);

    CREATE TABLE limit_revision (
      id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
      limit_id integer NOT NULL REFERENCES limit_function (id) ON DELETE CASCADE,
      revision integer NOT NULL,
      snapshot jsonb NOT NULL,
      changed_by integer REFERENCES app_user (id),
      changed_at timestamptz(3) NOT NULL,
      change_request_id integer,
      reason text,
      UNIQUE (limit_id, revision)
    );

    CREATE TABLE instrument_revision (
      id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
      instrument_id integer NOT NULL REFERENCES instrument (id) ON DELETE CASCADE,
      revision integer NOT NULL,
      snapshot jsonb NOT NULL,
      changed_by integer REFERENCES app_user (id),
      changed_at timestamptz(3) NOT NULL,
      change_request_id integer,
      reason text,
      UNIQUE (instrument_id, revision)
    );

    CREATE TABLE import_batch (
      id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
      site_id integer NOT NULL REFERENCES site (id),
      created_by integer NOT NULL REFERENCES app_user (id),
      file_name text NOT NULL,
      checksum char(64) NOT NULL,
      row_count integer NOT NULL,
      rows jsonb NOT NULL,
      status text NOT NULL DEFAULT 'checked' CHECK (status IN ('checked','committed','unchanged')),
      created_at timestamptz(3) NOT NULL,
      committed_at timestamptz(3)
    );

    CREATE TABLE import_mapping (
      user_id integer NOT NULL REFERENCES app_user (id),
      mapping jsonb NOT NULL,
      updated_at timestamptz(3) NOT NULL,
      PRIMARY KEY (user_id)
    );
  `.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`DROP TABLE IF EXISTS import_mapping, import_batch, instrument_revision, limit_revision, limit_instrument, limit_function, instrument, process CASCADE`.execute(
    db,
  )
}

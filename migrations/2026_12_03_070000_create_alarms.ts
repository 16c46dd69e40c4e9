import { type Kysely, sql } from 'kysely'

// The alarm journal (partitioned by month, partitions created on demand by alarm_event_ensure_partitions), its
// uploads, the alarm states (shelved, suppressed by design, out of service), process-data uploads and their samples
// for replays, and the journal column mapping remembered per user next to the register's.
export async function up(db: Kysely<any>): Promise<void> {
  await sql`
    CREATE TABLE alarm_journal_upload (
      id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
      site_id integer NOT NULL REFERENCES site (id),
      created_by integer NOT NULL REFERENCES app_user (id),
      file_name text NOT NULL,
      file_kind text NOT NULL CHECK (file_kind IN ('csv','xlsx')),
      checksum char(64),
      time_zone text NOT NULL,
      mapping jsonb NOT NULL,
      status text NOT NULL DEFAULT 'queued' CHECK (status IN ('queued','running','done','failed')),
      rows_read bigint NOT NULL DEFAULT 0,
      rows_stored bigint NOT NULL DEFAULT 0,
      rows_duplicate bigint NOT NULL DEFAULT 0,
      rows_rejected bigint NOT NULL DEFAULT 0,
      rejections jsonb NOT NULL DEFAULT '[]'::jsonb,
      unmatched_tags jsonb NOT NULL DEFAULT '[]'::jsonb,
      unmatched_tag_count integer NOT NULL DEFAULT 0,
      duplicate_of integer REFERENCES alarm_journal_upload (id),
      error text,
      first_at timestamptz(3),
      last_at timestamptz(3),
      file_path text,
      created_at timestamptz(3) NOT NULL,
      finished_at timestamptz(3)
    );
    CREATE INDEX alarm_journal_upload_site_idx ON alarm_journal_upload (site_id, created_at DESC);
    CREATE INDEX alarm_journal_upload_checksum_idx ON alarm_journal_upload (site_id, checksum);

    CREATE TABLE alarm_event (
      site_id integer NOT NULL,
      occurred_at timestamptz(3) NOT NULL,
      tag text NOT NULL,
      kind smallint NOT NULL CHECK (kind BETWEEN 0 AND 8),
      priority smallint NOT NULL DEFAULT -1 CHECK (priority BETWEEN -1 AND 3),
      position text NOT NULL DEFAULT '',
      message text NOT NULL DEFAULT '',
      limit_id integer,
      upload_id integer NOT NULL,
      row_hash uuid NOT NULL
    ) PARTITION BY RANGE (occurred_at);
    CREATE UNIQUE INDEX alarm_event_row_key ON alarm_event (site_id, occurred_at, row_hash);

    CREATE FUNCTION alarm_event_ensure_partitions(from_ts timestamptz, to_ts timestamptz) RETURNS integer
    LANGUAGE plpgsql SECURITY DEFINER SET search_path = public, pg_temp AS $fn$
    DECLARE
      m date := date_trunc('month', from_ts AT TIME ZONE 'UTC')::date;
      last date := date_trunc('month', to_ts AT TIME ZONE 'UTC')::date;
      made integer := 0;
      name text;
    BEGIN
      IF last < m OR last > m + interval '240 months' THEN
        RAISE EXCEPTION 'alarm journal months out of range: % to %', from_ts, to_ts;
      END IF;
      PERFORM pg_advisory_xact_lock(hashtext('alarm_event_partitions'));
      WHILE m <= last LOOP
        name := 'alarm_event_' || to_char(m, 'YYYY_MM');
        IF to_regclass(name) IS NULL THEN
          EXECUTE format('CREATE TABLE %I PARTITION OF alarm_event FOR VALUES FROM (%L) TO (%L)', name,
            (m::timestamp AT TIME ZONE 'UTC'), ((m + interval '1 month')::timestamp AT TIME ZONE 'UTC'));
          made := made + 1;
        END IF;
        m := (m + interval '1 month')::date;
      END LOOP;
      RETURN made;
    END
    $fn$;
    REVOKE ALL ON FUNCTION alarm_event_ensure_partitions(timestamptz, timestamptz) FROM PUBLIC;
    GRANT EXECUTE ON FUNCTION alarm_event_ensure_partitions(timestamptz, timestamptz) TO limitkeeper_app;

    CREATE TABLE alarm_state (
      id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
      site_id integer NOT NULL REFERENCES site (id),
      limit_id integer REFERENCES limit_function (id),
      tag text NOT NULL,
      kind text NOT NULL CHECK (kind IN ('shelved','suppressed','out_of_service')),
      status text NOT NULL DEFAULT 'active' CHECK (status IN ('active','ended')),
      reason text NOT NULL,
      started_by integer NOT NULL REFERENCES app_user (id),
      started_at timestamptz(3) NOT NULL,
      until timestamptz(3) NOT NULL,
      signature_id integer REFERENCES signature (id),
      change_request_id integer REFERENCES change_request (id),
      ended_by integer REFERENCES app_user (id),
      ended_at timestamptz(3),
      end_note text,
      CHECK (until > started_at)
    );
    CREATE UNIQUE INDEX alarm_state_one_active ON alarm_state (site_id, lower(tag)) WHERE status = 'active';
    CREATE INDEX alarm_state_site_idx ON alarm_state (site_id, status, until);

    CREATE TABLE process_data_upload (
      id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
      site_id integer NOT NULL REFERENCES site (id),
      instrument_id integer REFERENCES instrument (id),
      created_by integer NOT NULL REFERENCES app_user (id),
      file_name text NOT NULL,
      checksum char(64),
      time_zone text NOT NULL,
      series jsonb NOT NULL DEFAULT '[]'::jsonb,
      status text NOT NULL DEFAULT 'queued' CHECK (status IN ('queued','running','done','failed')),
      rows_read bigint NOT NULL DEFAULT 0,
      samples_stored bigint NOT NULL DEFAULT 0,
      rows_rejected bigint NOT NULL DEFAULT 0,
      rejections jsonb NOT NULL DEFAULT '[]'::jsonb,
      error text,
      first_at timestamptz(3),
      last_at timestamptz(3),
      file_path text,
      created_at timestamptz(3) NOT NULL,
      finished_at timestamptz(3)
    );
    CREATE INDEX process_data_upload_site_idx ON process_data_upload (site_id, created_at DESC);

    CREATE TABLE process_sample (
      upload_id integer NOT NULL REFERENCES process_data_upload (id) ON DELETE CASCADE,
      series smallint NOT NULL,
      t timestamptz(3) NOT NULL,
      value double precision
    );
    CREATE INDEX process_sample_series_idx ON process_sample (upload_id, series, t);

    ALTER TABLE import_mapping ADD COLUMN alarm_mapping jsonb NOT NULL DEFAULT '{}'::jsonb;
  `.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`
    ALTER TABLE import_mapping DROP COLUMN IF EXISTS alarm_mapping;
    DROP TABLE IF EXISTS process_sample, process_data_upload, alarm_state, alarm_event, alarm_journal_upload CASCADE;
    DROP FUNCTION IF EXISTS alarm_event_ensure_partitions(timestamptz, timestamptz);
  `.execute(db)
}

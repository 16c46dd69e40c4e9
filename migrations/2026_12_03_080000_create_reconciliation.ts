import { type Kysely, sql } from 'kysely'

// Reconciliation of the register with what the plant holds: sources (uploaded configuration exports and live
// Modbus TCP devices read only), runs, findings and each limit's last reconciliation per source.
export async function up(db: Kysely<any>): Promise<void> {
  await sql`
    CREATE TABLE reconciliation_source (
      id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
      site_id integer NOT NULL REFERENCES site (id),
      name text NOT NULL,
      kind text NOT NULL CHECK (kind IN ('export','modbus')),
      description text NOT NULL DEFAULT '',
      host text,
      port integer CHECK (port BETWEEN 1 AND 65535),
      unit_id integer CHECK (unit_id BETWEEN 0 AND 255),
      timeout_ms integer NOT NULL DEFAULT 3000 CHECK (timeout_ms BETWEEN 100 AND 60000),
      register_map jsonb NOT NULL DEFAULT '[]'::jsonb,
      column_mapping jsonb NOT NULL DEFAULT '{}'::jsonb,
      area_ids jsonb NOT NULL DEFAULT '[]'::jsonb,
      tolerances jsonb NOT NULL DEFAULT '{}'::jsonb,
      schedule_hours numeric,
      active boolean NOT NULL DEFAULT true,
      next_run_at timestamptz(3),
      version integer NOT NULL DEFAULT 1,
      created_by integer REFERENCES app_user (id),
      created_at timestamptz(3) NOT NULL,
      updated_at timestamptz(3) NOT NULL,
      UNIQUE (site_id, name),
      CHECK (kind = 'export' OR (host IS NOT NULL AND port IS NOT NULL AND unit_id IS NOT NULL))
    );
    CREATE INDEX reconciliation_source_due_idx ON reconciliation_source (next_run_at) WHERE active;

    CREATE TABLE reconciliation_run (
      id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
      source_id integer NOT NULL REFERENCES reconciliation_source (id),
      site_id integer NOT NULL REFERENCES site (id),
      trigger text NOT NULL CHECK (trigger IN ('manual','schedule','upload')),
      outcome text NOT NULL CHECK (outcome IN ('completed','unreachable')),
      started_at timestamptz(3) NOT NULL,
      finished_at timestamptz(3) NOT NULL,
      run_by integer REFERENCES app_user (id),
      file_name text,
      checksum char(64),
      rows_read integer NOT NULL DEFAULT 0,
      rows_ignored integer NOT NULL DEFAULT 0,
      limits_compared integer NOT NULL DEFAULT 0,
      attributes_compared integer NOT NULL DEFAULT 0,
      differences integer NOT NULL DEFAULT 0,
      findings_new integer NOT NULL DEFAULT 0,
      findings_reopened integer NOT NULL DEFAULT 0,
      findings_resolved integer NOT NULL DEFAULT 0,
      error text
    );
    CREATE INDEX reconciliation_run_source_idx ON reconciliation_run (source_id, started_at DESC);
    CREATE INDEX reconciliation_run_site_idx ON reconciliation_run (site_id, started_at DESC);

    CREATE TABLE finding (
      id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
      site_id integer NOT NULL REFERENCES site (id),
      source_id integer NOT NULL REFERENCES reconciliation_source (id),
      limit_id integer REFERENCES limit_function (id),
      tag text NOT NULL,
      attribute text NOT NULL DEFAULT '',
      kind text NOT NULL CHECK (kind IN ('changed_without_moc','not_in_register','missing_on_device',
        'bypassed_without_authorization','disabled','unreachable')),
      state text NOT NULL DEFAULT 'open' CHECK (state IN ('open','acknowledged','resolved','accepted')),
      register_value text,
      device_value text,
      unit text,
      detail text NOT NULL DEFAULT '',
      present boolean NOT NULL DEFAULT true,
      first_run_id integer NOT NULL REFERENCES reconciliation_run (id),
      last_run_id integer NOT NULL REFERENCES reconciliation_run (id),
      first_seen_at timestamptz(3) NOT NULL,
      last_seen_at timestamptz(3) NOT NULL,
      opened_at timestamptz(3) NOT NULL,
      reopen_count integer NOT NULL DEFAULT 0,
      acknowledged_by integer REFERENCES app_user (id),
      acknowledged_at timestamptz(3),
      change_request_id integer REFERENCES change_request (id),
      resolution text CHECK (resolution IN ('change_request','device_corrected','accepted')),
      resolved_by integer REFERENCES app_user (id),
      resolved_at timestamptz(3),
      resolved_run_id integer REFERENCES reconciliation_run (id),
      accept_reason text,
      version integer NOT NULL DEFAULT 1,
      UNIQUE (source_id, tag, attribute, kind)
    );
    CREATE INDEX finding_site_state_idx ON finding (site_id, state, kind);
    CREATE INDEX finding_limit_idx ON finding (limit_id);

    CREATE TABLE limit_reconciliation (
      limit_id integer NOT NULL REFERENCES limit_function (id),
      source_id integer NOT NULL REFERENCES reconciliation_source (id),
      run_id integer NOT NULL REFERENCES reconciliation_run (id),
      at timestamptz(3) NOT NULL,
      matched boolean NOT NULL,
      differences jsonb NOT NULL DEFAULT '[]'::jsonb,
      PRIMARY KEY (limit_id, source_id)
    );
  `.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`DROP TABLE IF EXISTS limit_reconciliation, finding, reconciliation_run, reconciliation_source CASCADE`.execute(
    db,
  )
}

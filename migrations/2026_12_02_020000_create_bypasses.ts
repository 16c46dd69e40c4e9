import { type Kysely, sql } from 'kysely'

// Bypasses: authorized, time-limited overrides of a limit with compensating measures; one active bypass per limit.
// Shift-handover acknowledgements of the state of protection.
export async function up(db: Kysely<any>): Promise<void> {
  await sql`
    CREATE TABLE bypass (
      id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
      limit_id integer NOT NULL REFERENCES limit_function (id),
      site_id integer NOT NULL REFERENCES site (id),
      channel_instrument_id integer REFERENCES instrument (id),
      requested_by integer NOT NULL REFERENCES app_user (id),
      reason text NOT NULL,
      compensating_measures jsonb NOT NULL DEFAULT '[]'::jsonb,
      planned_start timestamptz(3) NOT NULL,
      planned_end timestamptz(3) NOT NULL,
      status text NOT NULL DEFAULT 'requested' CHECK (status IN ('requested','authorized','rejected','active','removed','cancelled','lapsed')),
      change_request_id integer REFERENCES change_request (id),
      authorized_at timestamptz(3),
      activated_at timestamptz(3),
      activated_by integer REFERENCES app_user (id),
      removed_at timestamptz(3),
      removed_by integer REFERENCES app_user (id),
      pv_clear_confirmed boolean,
      protection_restored_confirmed boolean,
      removal_note text,
      expiry_warned_at timestamptz(3),
      overdue_notified_at timestamptz(3),
      last_escalation_at timestamptz(3),
      created_at timestamptz(3) NOT NULL,
      updated_at timestamptz(3) NOT NULL,
      CHECK (planned_end > planned_start)
    );
    CREATE UNIQUE INDEX bypass_one_active_per_limit ON bypass (limit_id) WHERE status = 'active';
    CREATE INDEX bypass_site_status_idx ON bypass (site_id, status);
    CREATE INDEX bypass_limit_idx ON bypass (limit_id, created_at DESC);

    CREATE TABLE handover_ack (
      id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
      area_id integer NOT NULL REFERENCES area (id),
      user_id integer NOT NULL REFERENCES app_user (id),
      at timestamptz(3) NOT NULL,
      snapshot jsonb NOT NULL,
      content_hash char(64) NOT NULL
    );
    CREATE INDEX handover_ack_area_idx ON handover_ack (area_id, at DESC);
  `.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`DROP TABLE IF EXISTS handover_ack, bypass CASCADE`.execute(db)
}

import { type Kysely, sql } from 'kysely'

// Foundation: users and role assignments per site, sites and their policies, sessions,
// sign-in attempts (rate limiting), the hash-chained audit trail, the mail outbox and job schedules.
// Runs as the owner role; the runtime role gets only what it needs (see docs/architecture.md).
export async function up(db: Kysely<any>): Promise<void> {
  await sql`
    DO $$ BEGIN
      IF NOT EXISTS (SELECT FROM pg_roles WHERE rolname = 'limitkeeper_app') THEN
        RAISE EXCEPTION 'the runtime role limitkeeper_app must exist before migrating';
      END IF;
    END $$;
    ALTER DEFAULT PRIVILEGES IN SCHEMA public GRANT SELECT, INSERT, UPDATE, DELETE ON TABLES TO limitkeeper_app;
    ALTER DEFAULT PRIVILEGES IN SCHEMA public GRANT USAGE, SELECT ON SEQUENCES TO limitkeeper_app;
    GRANT USAGE ON SCHEMA public TO limitkeeper_app;
    CREATE EXTENSION IF NOT EXISTS pg_trgm;

    CREATE TABLE app_user (
      id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
      email text NOT NULL,
      display_name text NOT NULL,
      password_hash text NOT NULL,
      active boolean NOT NULL DEFAULT true,
      created_at timestamptz(3) NOT NULL,
      updated_at timestamptz(3) NOT NULL
    );
    CREATE UNIQUE INDEX app_user_email_key ON app_user (lower(email));

    CREATE TABLE site (
      id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
      code text NOT NULL UNIQUE,
      name text NOT NULL,
      time_zone text NOT NULL,
      policy jsonb NOT NULL DEFAULT '{}'::jsonb,
      created_at timestamptz(3) NOT NULL
    );

    CREATE TABLE area (
      id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
      site_id integer NOT NULL REFERENCES site (id),
      name text NOT NULL,
      UNIQUE (site_id, name)
    );

    CREATE TABLE role_assignment (
      user_id integer NOT NULL REFERENCES app_user (id),
      site_id integer NOT NULL REFERENCES site (id),
      role text NOT NULL CHECK (role IN ('admin','safety_engineer','approver','shift_supervisor','technician','operator','plant_manager','auditor')),
      PRIMARY KEY (user_id, site_id, role)
    );
    CREATE INDEX role_assignment_site_role_idx ON role_assignment (site_id, role);

    CREATE TABLE session (
      sid varchar NOT NULL PRIMARY KEY,
      sess json NOT NULL,
      expire timestamp(6) NOT NULL
    );
    CREATE INDEX session_expire_idx ON session (expire);

    CREATE TABLE sign_in_attempt (
      id bigint GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
      at timestamptz(3) NOT NULL,
      email text NOT NULL,
      ip text NOT NULL,
      success boolean NOT NULL,
      purpose text NOT NULL CHECK (purpose IN ('sign_in','signature'))
    );
    CREATE INDEX sign_in_attempt_email_idx ON sign_in_attempt (lower(email), at) WHERE NOT success;
    CREATE INDEX sign_in_attempt_ip_idx ON sign_in_attempt (ip, at) WHERE NOT success;

    CREATE TABLE audit_event (
      id bigint GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
      occurred_at timestamptz(3) NOT NULL,
      actor_id integer,
      action text NOT NULL,
      entity_type text NOT NULL,
      entity_id text,
      before jsonb,
      after jsonb,
      reason text,
      batch_id uuid,
      request_id text,
      ip text,
      prev_hash char(64) NOT NULL UNIQUE,
      hash char(64) NOT NULL UNIQUE
    );
    CREATE INDEX audit_event_entity_idx ON audit_event (entity_type, entity_id);
    CREATE INDEX audit_event_actor_idx ON audit_event (actor_id, id);
    CREATE INDEX audit_event_occurred_idx ON audit_event (occurred_at);
    CREATE FUNCTION audit_event_append_only() RETURNS trigger LANGUAGE plpgsql AS $f$
    BEGIN
      RAISE EXCEPTION 'audit_event is append-only (% not allowed)', TG_OP USING ERRCODE = 'insufficient_privilege';
    END $f$;
    CREATE TRIGGER audit_event_no_update_delete BEFORE UPDATE OR DELETE ON audit_event
      FOR EACH ROW EXECUTE FUNCTION audit_event_append_only();
    CREATE TRIGGER audit_event_no_truncate BEFORE TRUNCATE ON audit_event
      FOR EACH STATEMENT EXECUTE FUNCTION audit_event_append_only();
    REVOKE UPDATE, DELETE, TRUNCATE ON audit_event FROM limitkeeper_app;

    CREATE TABLE mail_outbox (
      id bigint GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
      to_addr text NOT NULL,
      subject text NOT NULL,
      text_body text NOT NULL,
      html_body text,
      topic text NOT NULL DEFAULT 'general',
      created_at timestamptz(3) NOT NULL,
      attempts integer NOT NULL DEFAULT 0,
      next_attempt_at timestamptz(3) NOT NULL,
      sent_at timestamptz(3),
      last_error text
    );
    CREATE INDEX mail_outbox_due_idx ON mail_outbox (next_attempt_at) WHERE sent_at IS NULL;

    CREATE TABLE job_schedule (
      name text PRIMARY KEY,
      interval_sec integer NOT NULL CHECK (interval_sec > 0),
      next_run_at timestamptz(3) NOT NULL,
      locked_until timestamptz(3),
      last_run_at timestamptz(3),
      last_error text
    );
  `.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`
    DROP TABLE IF EXISTS job_schedule, mail_outbox, audit_event, sign_in_attempt, session, role_assignment, area, site, app_user CASCADE;
    DROP FUNCTION IF EXISTS audit_event_append_only();
  `.execute(db)
}

import { type Kysely, sql } from 'kysely'

// Management of change: change requests and their items, editors, impact checklist; electronic signatures and
// attachments (generic: also used by trip tests and bypasses).
export async function up(db: Kysely<any>): Promise<void> {
  await sql`
    CREATE TABLE change_request (
      id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
      site_id integer NOT NULL REFERENCES site (id),
      type text NOT NULL CHECK (type IN ('permanent','temporary','emergency')),
      title text NOT NULL,
      rationale text NOT NULL DEFAULT '',
      hazard_reference text NOT NULL DEFAULT '',
      status text NOT NULL DEFAULT 'draft' CHECK (status IN ('draft','submitted','approved','rejected','implemented','closed','withdrawn')),
      proposer_id integer NOT NULL REFERENCES app_user (id),
      expires_at timestamptz(3),
      approvals_required integer NOT NULL DEFAULT 1,
      content_hash char(64) NOT NULL,
      import_batch_id integer REFERENCES import_batch (id),
      submitted_at timestamptz(3),
      approved_at timestamptz(3),
      implemented_at timestamptz(3),
      closed_at timestamptz(3),
      pssr jsonb,
      revert_reminder_at timestamptz(3),
      emergency_flagged_at timestamptz(3),
      version integer NOT NULL DEFAULT 1,
      created_at timestamptz(3) NOT NULL,
      updated_at timestamptz(3) NOT NULL,
      CHECK (type <> 'temporary' OR expires_at IS NOT NULL)
    );
    CREATE INDEX change_request_site_status_idx ON change_request (site_id, status);
    CREATE INDEX change_request_proposer_idx ON change_request (proposer_id);

    CREATE TABLE change_request_item (
      id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
      change_request_id integer NOT NULL REFERENCES change_request (id) ON DELETE CASCADE,
      position integer NOT NULL,
      kind text NOT NULL CHECK (kind IN ('create','modify','retire','instrument')),
      limit_id integer REFERENCES limit_function (id),
      instrument_id integer REFERENCES instrument (id),
      changes jsonb NOT NULL DEFAULT '{}'::jsonb,
      base_revision integer NOT NULL,
      window_before jsonb,
      window_after jsonb,
      implemented_at timestamptz(3),
      implemented_by integer REFERENCES app_user (id),
      read_back jsonb,
      UNIQUE (change_request_id, position),
      CHECK ((kind = 'instrument') = (instrument_id IS NOT NULL AND limit_id IS NULL))
    );
    CREATE INDEX change_request_item_limit_idx ON change_request_item (limit_id);
    CREATE INDEX change_request_item_instrument_idx ON change_request_item (instrument_id);

    CREATE TABLE change_request_editor (
      change_request_id integer NOT NULL REFERENCES change_request (id) ON DELETE CASCADE,
      user_id integer NOT NULL REFERENCES app_user (id),
      PRIMARY KEY (change_request_id, user_id)
    );

    CREATE TABLE change_request_check (
      change_request_id integer NOT NULL REFERENCES change_request (id) ON DELETE CASCADE,
      item text NOT NULL,
      done_by integer NOT NULL REFERENCES app_user (id),
      done_at timestamptz(3) NOT NULL,
      note text NOT NULL DEFAULT '',
      PRIMARY KEY (change_request_id, item)
    );

    CREATE TABLE signature (
      id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
      entity_type text NOT NULL,
      entity_id integer NOT NULL,
      item_id integer,
      user_id integer NOT NULL REFERENCES app_user (id),
      name text NOT NULL,
      meaning text NOT NULL CHECK (meaning IN ('approved','rejected','implemented','closed','authorized','performed','witnessed','accepted','acknowledged')),
      at timestamptz(3) NOT NULL,
      content_hash char(64) NOT NULL,
      comment text NOT NULL DEFAULT '',
      voided_at timestamptz(3),
      void_reason text
    );
    CREATE INDEX signature_entity_idx ON signature (entity_type, entity_id);
    CREATE UNIQUE INDEX signature_one_approval_per_person ON signature (entity_type, entity_id, user_id, meaning)
      WHERE voided_at IS NULL AND meaning IN ('approved','witnessed','performed','accepted');

    CREATE TABLE attachment (
      id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
      entity_type text NOT NULL,
      entity_id integer NOT NULL,
      file_name text NOT NULL,
      content_type text NOT NULL,
      size_bytes integer NOT NULL,
      sha256 char(64) NOT NULL,
      content bytea NOT NULL,
      uploaded_by integer NOT NULL REFERENCES app_user (id),
      uploaded_at timestamptz(3) NOT NULL
    );
    CREATE INDEX attachment_entity_idx ON attachment (entity_type, entity_id);
  `.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`DROP TABLE IF EXISTS attachment, signature, change_request_check, change_request_editor, change_request_item, change_request CASCADE`.execute(
    db,
  )
}

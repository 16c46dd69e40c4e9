import { type Kysely, sql } from 'kysely'

// The shift handover as a record signed twice: the outgoing shift supervisor hands over one or more areas of a site
// with notes, the incoming one accepts. What was shown (the state of protection) and the notes are kept with the hash
// both signed; neither changes afterwards. Earlier single acknowledgements (handover_ack) stay as they are.
export async function up(db: Kysely<any>): Promise<void> {
  await sql`
    CREATE TABLE shift_handover (
      id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
      site_id integer NOT NULL REFERENCES site (id),
      status text NOT NULL DEFAULT 'handed_over' CHECK (status IN ('handed_over','accepted','superseded')),
      notes text NOT NULL DEFAULT '',
      snapshot jsonb NOT NULL,
      state_hash char(64) NOT NULL,
      content_hash char(64) NOT NULL,
      handed_over_by integer NOT NULL REFERENCES app_user (id),
      handed_over_at timestamptz(3) NOT NULL,
      accepted_by integer REFERENCES app_user (id),
      accepted_at timestamptz(3),
      CHECK ((status = 'accepted') = (accepted_by IS NOT NULL AND accepted_at IS NOT NULL)),
      CHECK (accepted_by IS NULL OR accepted_by <> handed_over_by)
    );
    CREATE TABLE shift_handover_area (
      handover_id integer NOT NULL REFERENCES shift_handover (id),
      area_id integer NOT NULL REFERENCES area (id),
      PRIMARY KEY (handover_id, area_id)
    );
    CREATE INDEX shift_handover_area_area_idx ON shift_handover_area (area_id, handover_id DESC);
    CREATE INDEX shift_handover_site_idx ON shift_handover (site_id, handed_over_at DESC);
    REVOKE DELETE, TRUNCATE ON shift_handover, shift_handover_area FROM limitkeeper_app;
    REVOKE UPDATE ON shift_handover_area FROM limitkeeper_app;
    CREATE FUNCTION shift_handover_signed_content() RETURNS trigger LANGUAGE plpgsql AS $f$
    BEGIN
      IF (NEW.site_id, NEW.notes, NEW.snapshot, NEW.state_hash, NEW.content_hash, NEW.handed_over_by,
            NEW.handed_over_at)
          IS DISTINCT FROM (OLD.site_id, OLD.notes, OLD.snapshot, OLD.state_hash, OLD.content_hash, OLD.handed_over_by,
            OLD.handed_over_at)
        OR OLD.status <> 'handed_over' THEN
        RAISE EXCEPTION 'a signed handover does not change' USING ERRCODE = 'insufficient_privilege';
      END IF;
      RETURN NEW;
    END $f$;
    CREATE TRIGGER shift_handover_signed_content BEFORE UPDATE ON shift_handover
      FOR EACH ROW EXECUTE FUNCTION shift_handover_signed_content();
  `.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`
    DROP TABLE IF EXISTS shift_handover_area, shift_handover CASCADE;
    DROP FUNCTION IF EXISTS shift_handover_signed_content();
  `.execute(db)
}

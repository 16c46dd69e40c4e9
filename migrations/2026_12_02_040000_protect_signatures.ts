import { type Kysely, sql } from 'kysely'

// Signatures and attachments are records: the runtime role can add them but never delete them, an attachment never
// changes, and a signature changes only once, to be voided (with the reason), keeping what was signed.
export async function up(db: Kysely<any>): Promise<void> {
  await sql`
    REVOKE DELETE, TRUNCATE ON signature, attachment FROM limitkeeper_app;
    REVOKE UPDATE ON attachment FROM limitkeeper_app;
    CREATE FUNCTION signature_only_voided() RETURNS trigger LANGUAGE plpgsql AS $f$
    BEGIN
      IF OLD.voided_at IS NOT NULL
        OR (NEW.entity_type, NEW.entity_id, NEW.item_id, NEW.user_id, NEW.name, NEW.meaning, NEW.at, NEW.content_hash, NEW.comment)
          IS DISTINCT FROM (OLD.entity_type, OLD.entity_id, OLD.item_id, OLD.user_id, OLD.name, OLD.meaning, OLD.at, OLD.content_hash, OLD.comment)
        OR NEW.voided_at IS NULL THEN
        RAISE EXCEPTION 'a signature can only be voided, once' USING ERRCODE = 'insufficient_privilege';
      END IF;
      RETURN NEW;
    END $f$;
    CREATE TRIGGER signature_only_voided BEFORE UPDATE ON signature FOR EACH ROW EXECUTE FUNCTION signature_only_voided();
  `.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`
    DROP TRIGGER IF EXISTS signature_only_voided ON signature;
    DROP FUNCTION IF EXISTS signature_only_voided();
    GRANT DELETE, TRUNCATE ON signature, attachment TO limitkeeper_app;
    GRANT UPDATE ON attachment TO limitkeeper_app;
  `.execute(db)
}

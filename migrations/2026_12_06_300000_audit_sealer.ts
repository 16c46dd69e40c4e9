import { type Kysely, sql } from 'kysely'

// The audit chain sealed apart from the business transactions (docs/adr/0003-audit-hash-chain.md): a business
// transaction inserts its event unsealed (its content and `data_hash`, the SHA-256 of that content; no lock, the id from
// the identity sequence), and the sealer job links the committed unsealed events into the chain in batches: chain
// position `seq` (the chain's total order), `prev_hash`, `hash`, keyed `link` and `sealed_at`, each written once.
// The append-only trigger allows exactly that one transition (unsealed to sealed, content unchanged) and refuses an
// event inserted already sealed; the runtime role may update the seal columns only. Events linked by the former
// append keep their links; their chain position is their id.
export async function up(db: Kysely<any>): Promise<void> {
  await sql`
    ALTER TABLE audit_event ADD COLUMN seq bigint;
    ALTER TABLE audit_event ADD COLUMN data_hash char(64);
    ALTER TABLE audit_event ADD COLUMN sealed_at timestamptz(3);
    ALTER TABLE audit_event ALTER COLUMN prev_hash DROP NOT NULL;
    ALTER TABLE audit_event ALTER COLUMN hash DROP NOT NULL;
    ALTER TABLE audit_event DISABLE TRIGGER audit_event_no_update_delete;
    UPDATE audit_event SET seq = id;
    ALTER TABLE audit_event ENABLE TRIGGER audit_event_no_update_delete;
    ALTER TABLE audit_event ADD CONSTRAINT audit_event_seal_whole CHECK (
      (seq IS NULL AND prev_hash IS NULL AND hash IS NULL AND link IS NULL AND sealed_at IS NULL AND data_hash IS NOT NULL)
      OR (seq IS NOT NULL AND prev_hash IS NOT NULL AND hash IS NOT NULL)
    );
    CREATE INDEX audit_event_unsealed_idx ON audit_event (id) WHERE seq IS NULL;
    -- the chain's uniqueness (no fork, one event per position) over sealed rows only: an unsealed insert touches none
    -- of these indexes, the seal writes them
    ALTER TABLE audit_event DROP CONSTRAINT audit_event_prev_hash_key;
    ALTER TABLE audit_event DROP CONSTRAINT audit_event_hash_key;
    CREATE UNIQUE INDEX audit_event_seq_key ON audit_event (seq) WHERE seq IS NOT NULL;
    CREATE UNIQUE INDEX audit_event_prev_hash_key ON audit_event (prev_hash) WHERE prev_hash IS NOT NULL;
    CREATE UNIQUE INDEX audit_event_hash_key ON audit_event (hash) WHERE hash IS NOT NULL;
    -- the former append numbered events itself: the identity sequence starts after them
    SELECT setval(pg_get_serial_sequence('audit_event', 'id'), greatest(max(id), 1), max(id) IS NOT NULL) FROM audit_event;

    CREATE OR REPLACE FUNCTION audit_event_append_only() RETURNS trigger LANGUAGE plpgsql AS $f$
    BEGIN
      IF TG_OP = 'INSERT' THEN
        IF NEW.seq IS NOT NULL OR NEW.prev_hash IS NOT NULL OR NEW.hash IS NOT NULL OR NEW.link IS NOT NULL
           OR NEW.sealed_at IS NOT NULL THEN
          RAISE EXCEPTION 'audit_event rows are inserted unsealed; only the sealer links them'
            USING ERRCODE = 'insufficient_privilege';
        END IF;
        RETURN NEW;
      END IF;
      IF TG_OP = 'UPDATE' AND OLD.seq IS NULL AND NEW.seq IS NOT NULL
         AND (NEW.id, NEW.occurred_at, NEW.actor_id, NEW.action, NEW.entity_type, NEW.entity_id, NEW.before, NEW.after,
              NEW.reason, NEW.batch_id, NEW.request_id, NEW.ip, NEW.site_id, NEW.data_hash)
             IS NOT DISTINCT FROM
             (OLD.id, OLD.occurred_at, OLD.actor_id, OLD.action, OLD.entity_type, OLD.entity_id, OLD.before, OLD.after,
              OLD.reason, OLD.batch_id, OLD.request_id, OLD.ip, OLD.site_id, OLD.data_hash) THEN
        RETURN NEW;
      END IF;
      RAISE EXCEPTION 'audit_event is append-only (% not allowed)', TG_OP USING ERRCODE = 'insufficient_privilege';
    END $f$;
    CREATE TRIGGER audit_event_insert_unsealed BEFORE INSERT ON audit_event
      FOR EACH ROW EXECUTE FUNCTION audit_event_append_only();
    GRANT UPDATE (seq, prev_hash, hash, link, sealed_at) ON audit_event TO limitkeeper_app;
  `.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  // unsealed events cannot be kept by the former design: seal them (the app's sealer) before going back
  await sql`
    REVOKE UPDATE (seq, prev_hash, hash, link, sealed_at) ON audit_event FROM limitkeeper_app;
    DROP TRIGGER audit_event_insert_unsealed ON audit_event;
    CREATE OR REPLACE FUNCTION audit_event_append_only() RETURNS trigger LANGUAGE plpgsql AS $f$
    BEGIN
      RAISE EXCEPTION 'audit_event is append-only (% not allowed)', TG_OP USING ERRCODE = 'insufficient_privilege';
    END $f$;
    DROP INDEX audit_event_unsealed_idx;
    DROP INDEX audit_event_seq_key;
    DROP INDEX audit_event_prev_hash_key;
    DROP INDEX audit_event_hash_key;
    ALTER TABLE audit_event ADD CONSTRAINT audit_event_prev_hash_key UNIQUE (prev_hash);
    ALTER TABLE audit_event ADD CONSTRAINT audit_event_hash_key UNIQUE (hash);
    ALTER TABLE audit_event DROP CONSTRAINT audit_event_seal_whole;
    ALTER TABLE audit_event ALTER COLUMN hash SET NOT NULL;
    ALTER TABLE audit_event ALTER COLUMN prev_hash SET NOT NULL;
    ALTER TABLE audit_event DROP COLUMN sealed_at;
    ALTER TABLE audit_event DROP COLUMN data_hash;
    ALTER TABLE audit_event DROP COLUMN seq;
  `.execute(db)
}

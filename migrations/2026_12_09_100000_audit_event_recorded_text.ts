import { type Kysely, sql } from 'kysely'

// An event's recorded states (`before`, `after`) kept as the JSON text the app wrote (type json) instead of jsonb
// (docs/adr/0003-audit-hash-chain.md, "Recorded states as text"): the trail holds exactly what was recorded, and the
// chain walk reads it back as stored instead of PostgreSQL writing each jsonb value out as text again (about 0.9 µs of
// the server's CPU per event, some 40 % of its share of a walk; npm run bench:audit). The hashes cover the values'
// canonical form, which the conversion keeps: an event written before reads back as jsonb wrote it out, with the same
// values. No query of the app compares or indexes these columns; the append-only trigger, which lets the sealer link
// an event only with its content unchanged, now compares their texts (json has no equality): stricter than values.
/**
 * The append-only trigger function, the sealer's one allowed update comparing the event's content with the states
 * taken as `states` (their text for json; as they are for jsonb, which has equality).
 */
function appendOnly(states: 'text' | 'value') {
  const content = (e: 'NEW' | 'OLD') => {
    const state = (c: string) => (states === 'text' ? `${e}.${c}::text` : `${e}.${c}`)
    return (
      `(${e}.id, ${e}.occurred_at, ${e}.actor_id, ${e}.action, ${e}.entity_type, ${e}.entity_id, ` +
      `${state('before')}, ${state('after')}, ${e}.reason, ${e}.batch_id, ${e}.request_id, ${e}.ip, ${e}.site_id, ` +
      `${e}.data_hash)`
    )
  }
  return sql.raw(`
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
         AND ${content('NEW')} IS NOT DISTINCT FROM ${content('OLD')} THEN
        RETURN NEW;
      END IF;
      RAISE EXCEPTION 'audit_event is append-only (% not allowed)', TG_OP USING ERRCODE = 'insufficient_privilege';
    END $f$;`)
}

export async function up(db: Kysely<any>): Promise<void> {
  await sql`
    ALTER TABLE audit_event ALTER COLUMN before TYPE json USING before::json,
      ALTER COLUMN after TYPE json USING after::json;
    ${appendOnly('text')}
  `.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`
    ALTER TABLE audit_event ALTER COLUMN before TYPE jsonb USING before::jsonb,
      ALTER COLUMN after TYPE jsonb USING after::jsonb;
    ${appendOnly('value')}
  `.execute(db)
}

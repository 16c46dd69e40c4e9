import { type Kysely, sql } from 'kysely'

// The site of events written before events carried it (docs/security.md, "Whose events a reader sees"). An event's
// own site_id is part of its hash and the table is append-only, so the site of older events, where it can be derived
// from the entity they name, is kept beside them in audit_event_site; reading scopes by
// coalesce(audit_event.site_id, audit_event_site.site_id). The table maps entity types to tables as
// server/features/audit/audit.sites.ts does; the app's role may only read it. No foreign key to audit_event: one would
// change how TRUNCATE of the audit table is refused (its append-only trigger must answer).
const ENTITY_TABLES: [string, string][] = [
  ['Area', 'area'],
  ['Process', 'process'],
  ['Instrument', 'instrument'],
  ['Limit', 'limit_function'],
  ['ImportBatch', 'import_batch'],
  ['ChangeRequest', 'change_request'],
  ['TripTest', 'trip_test'],
  ['TestDeferral', 'test_deferral'],
  ['Bypass', 'bypass'],
  ['Demand', 'demand'],
  ['ShiftHandover', 'shift_handover'],
  ['alarm_journal_upload', 'alarm_journal_upload'],
  ['process_data_upload', 'process_data_upload'],
  ['alarm_state', 'alarm_state'],
  ['ReconciliationSource', 'reconciliation_source'],
  ['ReconciliationRun', 'reconciliation_run'],
  ['Finding', 'finding'],
]

export async function up(db: Kysely<any>): Promise<void> {
  await sql`
    CREATE TABLE audit_event_site (
      event_id bigint PRIMARY KEY,
      site_id integer NOT NULL REFERENCES site(id)
    );
    CREATE INDEX audit_event_site_site_idx ON audit_event_site (site_id, event_id);
    REVOKE INSERT, UPDATE, DELETE, TRUNCATE ON audit_event_site FROM limitkeeper_app;
  `.execute(db)
  await backfillAuditEventSites(db)
}

/** Derives the site of every event without one that names an entity with a site (tests call it too). */
export async function backfillAuditEventSites(db: Kysely<any>): Promise<void> {
  const entityId = sql`CASE WHEN e.entity_id ~ '^[1-9][0-9]{0,8}$' THEN e.entity_id::integer END`
  await sql`
    INSERT INTO audit_event_site (event_id, site_id)
    SELECT e.id, s.id FROM audit_event e JOIN site s ON s.id::text = e.entity_id
    WHERE e.site_id IS NULL AND e.entity_type = 'Site'
    ON CONFLICT (event_id) DO NOTHING
  `.execute(db)
  for (const [type, table] of ENTITY_TABLES)
    await sql`
      INSERT INTO audit_event_site (event_id, site_id)
      SELECT e.id, t.site_id FROM audit_event e JOIN ${sql.table(table)} t ON t.id = ${entityId}
      WHERE e.site_id IS NULL AND e.entity_type = ${type}
      ON CONFLICT (event_id) DO NOTHING
    `.execute(db)
  // an entity deleted since (a draft limit): the site its recorded state named, after the change, else before it
  // (read as jsonb: the states are json since 2026_12_09_100000_audit_event_recorded_text)
  for (const state of ['after', 'before'])
    await sql`
      INSERT INTO audit_event_site (event_id, site_id)
      SELECT e.id, s.id FROM audit_event e JOIN site s ON s.id::text = (${sql.ref(`e.${state}`)}::jsonb ->> 'siteId')
      WHERE e.site_id IS NULL AND e.entity_type <> ALL (ARRAY['User', 'System'])
        AND jsonb_typeof(${sql.ref(`e.${state}`)}::jsonb -> 'siteId') = 'number'
      ON CONFLICT (event_id) DO NOTHING
    `.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`DROP TABLE audit_event_site`.execute(db)
}

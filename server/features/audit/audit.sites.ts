import type { Kysely, Transaction } from 'kysely'
import type { Database } from '../../db/schema.ts'

/**
 * Where each audited entity type keeps its site (docs/security.md, "Whose events a reader sees"): the table whose
 * `site_id` an event about it carries, `'self'` for a site, or `null` for installation-wide entities (accounts, the
 * installation itself), whose events carry no site. Every entity type an event may name is listed here, so an event
 * type without a rule does not compile.
 */
export const AUDIT_ENTITY_SITE = {
  Site: 'self',
  Area: 'area',
  Process: 'process',
  Instrument: 'instrument',
  Limit: 'limit_function',
  ImportBatch: 'import_batch',
  ChangeRequest: 'change_request',
  ChangeProposal: 'change_proposal',
  TripTest: 'trip_test',
  TestDeferral: 'test_deferral',
  Bypass: 'bypass',
  Demand: 'demand',
  ShiftHandover: 'shift_handover',
  alarm_journal_upload: 'alarm_journal_upload',
  process_data_upload: 'process_data_upload',
  alarm_state: 'alarm_state',
  ReconciliationSource: 'reconciliation_source',
  ReconciliationRun: 'reconciliation_run',
  Finding: 'finding',
  User: null,
  System: null,
} as const satisfies Record<string, keyof Database | 'self' | null>

export type AuditEntityType = keyof typeof AUDIT_ENTITY_SITE

export const AUDIT_ENTITY_TYPES = Object.keys(AUDIT_ENTITY_SITE) as AuditEntityType[]

/** An event to place: its entity, and the `siteId` its before/after state names (an entity deleted in the change). */
export interface SiteQuestion {
  entityType: AuditEntityType
  entityId: string | null
  before?: unknown
  after?: unknown
}

const INT = /^[1-9]\d{0,9}$/

function siteIdIn(state: unknown): number | null {
  if (state && typeof state === 'object' && 'siteId' in state) {
    const v = (state as { siteId: unknown }).siteId
    if (typeof v === 'number' && Number.isInteger(v)) return v
  }
  return null
}

/**
 * The site of each event: read from the entity's table in the caller's transaction (one query per entity type), or,
 * when the entity is gone (deleted in the same change) or has no numeric id, from the `siteId` of its before/after
 * state. Installation-wide entity types give null.
 */
export async function resolveAuditSites(
  db: Kysely<Database> | Transaction<Database>,
  events: SiteQuestion[],
): Promise<(number | null)[]> {
  const found = new Map<string, number>()
  const byTable = new Map<string, Set<number>>()
  for (const e of events) {
    const table = AUDIT_ENTITY_SITE[e.entityType]
    if (table === undefined) throw new Error(`audit entity type ${e.entityType} has no site rule`)
    if (table === null || table === 'self' || e.entityId === null || !INT.test(e.entityId)) continue
    const id = Number(e.entityId)
    if (id > 2147483647) continue
    let ids = byTable.get(table)
    if (!ids) byTable.set(table, (ids = new Set()))
    ids.add(id)
  }
  for (const [table, ids] of byTable) {
    const all = [...ids]
    for (let i = 0; i < all.length; i += 1000) {
      const rows = await db
        .selectFrom(table as 'area')
        .select(['id', 'site_id'])
        .where('id', 'in', all.slice(i, i + 1000))
        .execute()
      for (const r of rows) found.set(`${table}:${r.id}`, r.site_id)
    }
  }
  return events.map((e) => {
    const table = AUDIT_ENTITY_SITE[e.entityType]
    if (table === null) return null
    if (table === 'self') return e.entityId !== null && INT.test(e.entityId) ? Number(e.entityId) : null
    const site = e.entityId === null ? undefined : found.get(`${table}:${e.entityId}`)
    return site ?? siteIdIn(e.after) ?? siteIdIn(e.before)
  })
}

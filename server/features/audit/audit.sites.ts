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

import { z } from 'zod'
import { IdSchema, InstantSchema, isKnownTimeZone, ListQuerySchema, type ListResult, PageSchema } from './common.ts'

/**
 * What each action code of the audit trail means, in words (the list, its CSV export and the change timeline read
 * it). A code without a label is shown as the code itself; tests/unit/shared/audit-labels.test.ts checks that every
 * code the server writes has one.
 */
export const AUDIT_ACTION_LABELS: Record<string, string> = {
  'session.sign_in': 'Signed in',
  'session.sign_in_failed': 'Sign-in failed',
  'session.sign_out': 'Signed out',
  'signature.failed': 'Signature refused (wrong password)',
  'user.create': 'Account created',
  'user.update': 'Account changed',
  'user.password_reset': 'Password reset by an administrator',
  'user.password_change': 'Password changed',
  'user.password_change_failed': 'Password change refused (wrong current password)',
  'site.create': 'Site created',
  'site.update': 'Site changed',
  'area.create': 'Area created',
  'area.update': 'Area changed',
  'process.create': 'Process created',
  'process.update': 'Process changed',
  'instrument.create': 'Instrument created',
  'instrument.update': 'Instrument changed',
  'limit.create': 'Limit created',
  'limit.update': 'Limit draft changed',
  'limit.delete': 'Limit draft deleted',
  'limit.activate': 'Limit put in service',
  'limit.change': 'Limit changed by a change request',
  'limit.retire': 'Limit retired',
  'limit.degraded': 'Limit marked degraded',
  'limit.degradation_cleared': 'Degradation cleared',
  'limit.degradation_measures': 'Compensating measures for degradation recorded',
  'limit.repair_deadline_approved': 'Repair deadline approved',
  'limit.repair_deadline_passed': 'Repair deadline passed',
  'limit.demand_assumptions': 'Demand assumptions changed',
  'import.commit': 'Register import committed',
  'history_import.commit': 'History import committed',
  'change_request.create': 'Change request created',
  'change_request.update': 'Change request edited',
  'change_request.submit': 'Change request submitted',
  'change_request.withdraw': 'Change request withdrawn',
  'change_request.review': 'Change request reviewed for a discipline (signed)',
  'change_request.approve': 'Change request approved (signed)',
  'change_request.reject': 'Change request rejected (signed)',
  'change_request.implement': 'Change request implemented (signed)',
  'change_request.close': 'Change request closed (signed)',
  'change_request.attach': 'Attachment added to a change request',
  'change_request.approval_expired': 'Approval expired',
  'change_request.emergency_flagged': 'Emergency change overdue for approval',
  'change_request.revert_reminder': 'Temporary change due to be reverted',
  'change_request.expired_not_reverted': 'Temporary change expired, not yet reverted',
  'change_proposal.create': 'Change proposal raised',
  'change_proposal.take_up': 'Change proposal taken up into a change request',
  'change_proposal.decline': 'Change proposal declined',
  'trip_test.record': 'Trip test recorded',
  'trip_test.update': 'Trip test edited',
  'trip_test.attach': 'Attachment added to a trip test',
  'trip_test.performed': 'Trip test signed as performed',
  'trip_test.witnessed': 'Trip test signed as witnessed',
  'trip_test.returned_to_service': 'Trip test signed: returned to service',
  'trip_test.accepted': 'Trip test signed as accepted',
  'trip_test.digest': 'Overdue-test digest sent',
  'test_deferral.request': 'Test deferral requested',
  'test_deferral.approve': 'Test deferral approved',
  'test_deferral.reject': 'Test deferral rejected',
  'bypass.request': 'Bypass requested',
  'bypass.authorize': 'Bypass authorized (signed)',
  'bypass.extend': 'Bypass extension authorized (signed)',
  'bypass.reject': 'Bypass rejected',
  'bypass.cancel': 'Bypass cancelled',
  'bypass.activate': 'Bypass activated',
  'bypass.remove': 'Bypass removed',
  'bypass.lapse': 'Bypass authorization lapsed',
  'bypass.overdue': 'Bypass overdue',
  'bypass.escalate': 'Overdue bypass escalated',
  'demand.record': 'Demand recorded',
  'demand.classify': 'Demand classified',
  'demand.credit_as_test': 'Demand credited as a trip test',
  'shift_handover.hand_over': 'Shift handed over (signed)',
  'shift_handover.accept': 'Shift handover accepted (signed)',
  'alarm_journal.upload': 'Alarm journal uploaded',
  'alarm_journal.import': 'Alarm journal imported',
  'alarm_state.shelved': 'Alarm shelved',
  'alarm_state.suppressed': 'Alarm suppressed',
  'alarm_state.out_of_service': 'Alarm taken out of service',
  'alarm_state.end': 'Alarm state ended',
  'process_data.upload': 'Process data uploaded',
  'reconciliation_source.create': 'Reconciliation source created',
  'reconciliation_source.update': 'Reconciliation source changed',
  'reconciliation_source.read': 'Device read for reconciliation',
  'reconciliation.run': 'Reconciliation run',
  'finding.accept': 'Finding accepted',
  'finding.acknowledge': 'Finding acknowledged',
  'finding.link_change': 'Finding linked to a change request',
  'seed.demo': 'Demo data loaded',
}

/** The action's words, or its code when it has none. */
export function auditActionLabel(action: string): string {
  return AUDIT_ACTION_LABELS[action] ?? action
}

/** What kind of record an event names, in words. */
export const AUDIT_ENTITY_LABELS: Record<string, string> = {
  Site: 'Site',
  Area: 'Area',
  Process: 'Process',
  Instrument: 'Instrument',
  Limit: 'Limit',
  ImportBatch: 'Import (register or history)',
  ChangeRequest: 'Change request',
  ChangeProposal: 'Change proposal',
  TripTest: 'Trip test',
  TestDeferral: 'Test deferral',
  Bypass: 'Bypass',
  Demand: 'Demand',
  ShiftHandover: 'Shift handover',
  alarm_journal_upload: 'Alarm journal',
  process_data_upload: 'Process data',
  alarm_state: 'Alarm state',
  ReconciliationSource: 'Reconciliation source',
  ReconciliationRun: 'Reconciliation run',
  Finding: 'Finding',
  User: 'Account',
  System: 'Installation',
}

/** The filters of the audit trail's list and export; `from` and `to` are instants (`to` exclusive). */
const auditFilters = {
  q: ListQuerySchema.shape.q,
  entityType: z.string().max(60).optional(),
  entityId: z.string().max(60).optional(),
  actorId: IdSchema.optional(),
  action: z.string().max(80).optional(),
  siteId: IdSchema.optional(),
  from: InstantSchema.optional(),
  to: InstantSchema.optional(),
}

/**
 * `GET /api/audit-events`: filters and paging. The order is fixed (newest first), so a `sort`, like any parameter
 * the list does not take, is refused (400) rather than silently ignored (docs/api.md#audit-events).
 */
export const AuditQuerySchema = PageSchema.extend({ ...auditFilters, cursor: IdSchema.optional() }).strict()
export type AuditQuery = z.infer<typeof AuditQuerySchema>
/** The list query as the client sends it. */
export type AuditListQuery = Partial<AuditQuery>
/** The filters of the list and its export, without paging (`from` and `to` are instants, `to` exclusive). */
export type AuditFilters = Omit<AuditListQuery, 'page' | 'pageSize' | 'cursor' | 'actorId'>

/** `GET /api/audit-events/export.csv`: the list's filters and the time zone of the local-time column. */
export const AuditExportQuerySchema = z
  .object({
    ...auditFilters,
    tz: z.string().max(64).refine(isKnownTimeZone, 'Unknown time zone').default('UTC'),
  })
  .strict()
export type AuditExportQuery = z.infer<typeof AuditExportQuerySchema>

/** What an event records besides who did what to which entity when (its hashes cover these too). */
export interface AuditRecorded {
  before: unknown
  after: unknown
  reason: string | null
  batchId: string | null
  requestId: string | null
  ip: string | null
}

/** One event as the list gives it. */
export interface AuditEventDto extends AuditRecorded {
  id: number
  at: string
  actorId: number | null
  actorName: string | null
  action: string
  entityType: string
  entityId: string | null
  /** The entity's tag, title or name now (null when it is gone or has none). */
  entityTitle: string | null
  /** The limit the entity belongs to (trip tests, bypasses, demands, deferrals, alarm states), for a link. */
  entityLimitId: number | null
  siteId: number | null
  siteCode: string | null
  /** Null until the sealer has linked the event into the chain (about a second after it is written). */
  prevHash: string | null
  hash: string | null
  /** Position in the chain; null while not yet sealed. */
  seq: number | null
}

/** `GET /api/audit-events`: a page of events; `nextCursor` is the last id of a full page, else null. */
export interface AuditEventList extends ListResult<AuditEventDto> {
  nextCursor: number | null
}

/** `POST /api/audit-events/verify`: the verifier's answer. */
export interface AuditVerifyDto {
  ok: boolean
  checked: number
  checkpoints: number
  /** The first event concerned when broken (for a missing event: the one after it; null when none is left). */
  badId: number | null
  /** The chain position concerned when broken. */
  badSeq: number | null
  problem: string | null
  checkpoint: string | null
  checkpointProblems: string[]
  headId: number | null
  headSeq: number | null
  headHash: string | null
  unkeyed: number
  /** Events written and not yet sealed, each younger than the bound (an older one breaks the verdict). */
  unsealed: number
  seconds: number
}

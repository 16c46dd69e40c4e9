import type { ColumnType, Generated, Insertable, Selectable } from 'kysely'
import type {
  ALARM_TYPES,
  IMPACT_CATEGORIES,
  Instrument,
  Limit,
  LIMIT_CLASSES,
  Signal,
  Subsystem,
} from '../../shared/schemas/register.ts'
import type {
  ChangeItemKind,
  ChangeStatus,
  ChangeType,
  ChecklistItem,
  Discipline,
  ItemReadBack,
  ItemWindow,
  ReadBackExpected,
} from '../../shared/schemas/change-requests.ts'
import type {
  AsFoundResultDto,
  AsLeftResultDto,
  ChannelResultDto,
  ComponentScope,
  DeferralRisk,
  TEST_METHODS,
  TestScope,
  TripTestPrecautions,
} from '../../shared/schemas/trip-tests.ts'
import type { StoredRow } from '../features/register/import-file.ts'
import type { TestDueStatus } from '../../shared/domain/due-dates.ts'
import type { DeferralStatus } from '../../shared/domain/rules/trip-tests.ts'
import type { Role } from '../../shared/schemas/users.ts'
import type { BypassStatus } from '../../shared/schemas/bypasses.ts'
import type { HandoverSnapshot, ShiftHandoverStatus } from '../../shared/schemas/shift-handover.ts'
import type {
  FindingKind,
  FindingResolution,
  FindingState,
  RunOutcome,
  RunTrigger,
  SourceKind,
} from '../../shared/schemas/reconciliation.ts'

type Timestamp = ColumnType<Date, Date | string, Date | string>
type Json = ColumnType<unknown, string | null, string | null>

export interface AppUserTable {
  id: Generated<number>
  email: string
  display_name: string
  password_hash: string
  active: Generated<boolean>
  created_at: Timestamp
  updated_at: Timestamp
}
export interface SiteTable {
  id: Generated<number>
  code: string
  name: string
  time_zone: string
  policy: ColumnType<Record<string, unknown>, string | undefined, string>
  created_at: Timestamp
}
export interface AreaTable {
  id: Generated<number>
  site_id: number
  name: string
}
export interface RoleAssignmentTable {
  user_id: number
  site_id: number
  role: Role
}
export interface SignInAttemptTable {
  id: Generated<number>
  at: Timestamp
  email: string
  ip: string
  success: boolean
  purpose: SignInPurpose
}
export type SignInPurpose = 'sign_in' | 'signature' | 'password_change'
export interface SignInThrottleTable {
  key: string
  failures: Generated<number>
  last_failure_at: Timestamp | null
  blocked_until: Timestamp | null
}
export interface AuditEventTable {
  id: Generated<number>
  occurred_at: Timestamp
  actor_id: number | null
  action: string
  entity_type: string
  entity_id: string | null
  /** the recorded states as the JSON text the app wrote (type json, read back parsed as jsonb is) */
  before: Json
  after: Json
  reason: string | null
  batch_id: string | null
  request_id: string | null
  ip: string | null
  /** The previous event's hash in the chain; null until sealed. */
  prev_hash: string | null
  /** The chain hash; null until sealed. */
  hash: string | null
  /** HMAC-SHA256 of hash under the audit key (null until sealed, and on events written before keyed links). */
  link: string | null
  /** The site the event is about; null for installation-wide events (sign-in, accounts without a site). */
  site_id: number | null
  /** SHA-256 of the event's content, written with it (null on events linked by the former append). */
  data_hash: string | null
  /** Position in the chain, given by the sealer (the chain's order); null until sealed. */
  seq: number | null
  /** When the sealer linked it; null until sealed and on events linked by the former append. */
  sealed_at: Timestamp | null
}
/** The derived site of an event written before events carried their site (read-only for the app). */
export interface AuditEventSiteTable {
  event_id: number
  site_id: number
}
export interface MailOutboxTable {
  id: Generated<number>
  to_addr: string
  subject: string
  text_body: string
  html_body: string | null
  topic: Generated<string>
  created_at: Timestamp
  attempts: Generated<number>
  next_attempt_at: Timestamp
  sent_at: Timestamp | null
  last_error: string | null
  /** 0 = urgent lane (delivered first), 1 = normal */
  priority: Generated<MailPriority>
}
export type MailPriority = 0 | 1
export interface JobScheduleTable {
  name: string
  interval_sec: number
  next_run_at: Timestamp
  locked_until: Timestamp | null
  lease_owner: string | null
  last_run_at: Timestamp | null
  last_error: string | null
}
export interface SessionTable {
  sid: string
  sess: unknown
  expire: Timestamp
}

type Numeric = ColumnType<string, string | number, string | number>
type NullableNumeric = ColumnType<string | null, string | number | null, string | number | null>
type JsonValue<T> = ColumnType<T, string, string>

export interface ProcessTable {
  id: Generated<number>
  area_id: number
  site_id: number
  name: string
  description: Generated<string>
  created_at: Timestamp
  updated_at: Timestamp
}
export interface InstrumentTable {
  id: Generated<number>
  process_id: number
  area_id: number
  site_id: number
  tag: string
  measured_variable: Instrument['measuredVariable']
  unit: string
  pressure_reference: Instrument['pressureReference']
  range_low: Numeric
  range_high: Numeric
  normal_low: NullableNumeric
  normal_high: NullableNumeric
  design_low: NullableNumeric
  design_high: NullableNumeric
  burnout: Instrument['burnout']
  signal: JsonValue<Signal>
  device_kind: Instrument['deviceKind']
  device_description: Generated<string>
  model: Generated<string>
  revision: Generated<number>
  created_at: Timestamp
  updated_at: Timestamp
}
export interface LimitFunctionTable {
  id: Generated<number>
  process_id: number
  area_id: number
  site_id: number
  primary_instrument_id: number
  tag: string
  description: Generated<string>
  direction: Limit['direction']
  limit_class: (typeof LIMIT_CLASSES)[number]
  setpoint: Numeric
  deadband: Numeric
  deadband_unit: Limit['deadbandUnit']
  on_delay_sec: Numeric
  off_delay_sec: Numeric
  latching: boolean
  reset_role: Limit['resetRole']
  bad_value_trip: boolean
  action: string
  consequence: string
  operator_response: string
  response_time_min: NullableNumeric
  severity: Limit['severity']
  priority: Limit['priority']
  priority_explanation: string
  analytical_limit: NullableNumeric
  process_safety_time_sec: NullableNumeric
  required_response_time_sec: NullableNumeric
  bypass_permitted: boolean
  max_bypass_hours: NullableNumeric
  compensating_measures: JsonValue<string[]>
  test_interval_months: number
  test_grace_days: number | null
  code_set_interval: boolean
  sil: Limit['sil']
  subsystems: JsonValue<Subsystem[]>
  alarm_type: Generated<(typeof ALARM_TYPES)[number]>
  causes: Generated<string>
  confirmation: Generated<string>
  impact_category: (typeof IMPACT_CATEGORIES)[number] | null
  safety_related_alarm: Generated<boolean>
  claimed_risk_reduction: NullableNumeric
  status: Generated<Limit['status']>
  revision: Generated<number>
  protection_state: Generated<Limit['protectionState']>
  window_errors: JsonValue<{ code: string; field?: string; message: string }[]>
  window_warnings: JsonValue<{ code: string; field?: string; message: string }[]>
  has_window_errors: ColumnType<boolean, never, never>
  has_window_warnings: ColumnType<boolean, never, never>
  search_text: ColumnType<string, never, never>
  created_by: number | null
  created_at: Timestamp
  updated_at: Timestamp
  test_status: Generated<TestDueStatus>
  test_due_date: ColumnType<string | null, string | null, string | null>
  last_full_pass: ColumnType<string | null, string | null, string | null>
  /** The day the test status next changes by the calendar alone (docs/domain/due-dates.md); null: never by it. */
  test_status_changes_on: ColumnType<string | null, string | null | undefined, string | null>
  assumed_demand_rate_per_year: ColumnType<string | null, string | number | null | undefined, string | number | null>
  assumed_spurious_rate_per_year: ColumnType<string | null, string | number | null | undefined, string | number | null>
  commissioned_at: ColumnType<string | null, string | null | undefined, string | null>
}
export interface LimitInstrumentTable {
  limit_id: number
  position: number
  instrument_id: number
}
export interface RevisionTable {
  id: Generated<number>
  revision: number
  snapshot: JsonValue<Record<string, unknown>>
  changed_by: number | null
  changed_at: Timestamp
  change_request_id: number | null
  reason: string | null
}
export interface LimitRevisionTable extends RevisionTable {
  limit_id: number
}
export interface InstrumentRevisionTable extends RevisionTable {
  instrument_id: number
}
export interface ImportBatchTable {
  id: Generated<number>
  site_id: number
  created_by: number
  file_name: string
  checksum: string
  row_count: number
  /** the file's data rows, cells by the column keys of its kind */
  rows: JsonValue<StoredRow[]>
  status: Generated<string>
  created_at: Timestamp
  committed_at: Timestamp | null
  /** a register file or a history file (docs/trip-tests.md#history-import) */
  kind: Generated<'register' | 'history'>
}
export interface ImportMappingTable {
  user_id: number
  mapping: JsonValue<Record<string, string>>
  updated_at: Timestamp
  alarm_mapping: ColumnType<Record<string, string>, string | undefined, string>
}

export interface ChangeRequestTable {
  id: Generated<number>
  site_id: number
  type: ChangeType
  title: string
  rationale: string
  hazard_reference: string
  status: ColumnType<ChangeStatus, ChangeStatus | undefined, ChangeStatus>
  proposer_id: number
  expires_at: Timestamp | null
  approvals_required: number
  /** the discipline reviews the site policy asked for when the request was written (docs/change-requests.md) */
  reviews_required: ColumnType<Discipline[], Discipline[] | undefined, Discipline[]>
  content_hash: string
  import_batch_id: number | null
  submitted_at: Timestamp | null
  approved_at: Timestamp | null
  implemented_at: Timestamp | null
  closed_at: Timestamp | null
  pssr: ColumnType<Record<string, unknown> | null, string | null, string | null>
  revert_reminder_at: Timestamp | null
  emergency_flagged_at: Timestamp | null
  /** the temporary change this request reverses (docs/change-requests.md#expired-temporary-changes) */
  reverses_id: ColumnType<number | null, number | null | undefined, number | null>
  /** last daily notice that the temporary change expired and is not reverted */
  expired_notice_at: Timestamp | null
  version: Generated<number>
  created_at: Timestamp
  updated_at: Timestamp
}
export interface ChangeProposalTable {
  id: Generated<number>
  site_id: number
  limit_id: number | null
  title: string
  reason: string
  status: ColumnType<'open' | 'taken_up' | 'declined', 'open' | undefined, 'taken_up' | 'declined'>
  proposer_id: number
  created_at: Timestamp
  decided_by: number | null
  decided_at: Timestamp | null
  decline_reason: string | null
  change_request_id: number | null
}
export interface ChangeRequestItemTable {
  id: Generated<number>
  change_request_id: number
  position: number
  kind: ChangeItemKind
  limit_id: number | null
  instrument_id: number | null
  changes: JsonValue<Record<string, { from: unknown; to: unknown }>>
  base_revision: number
  /** the operating-window findings before the change and with its values; null on the side that has no limit */
  window_before: ColumnType<ItemWindow | null, string | null, string | null>
  window_after: ColumnType<ItemWindow | null, string | null, string | null>
  implemented_at: Timestamp | null
  implemented_by: number | null
  read_back: ColumnType<ItemReadBack | null, string | null, string | null>
  /** alarm priority and enabled state read back beyond the changed fields; null where none */
  read_back_expected: ColumnType<ReadBackExpected | null, string | null | undefined, string | null>
}
export interface ChangeRequestEditorTable {
  change_request_id: number
  user_id: number
}
export interface ChangeRequestCheckTable {
  change_request_id: number
  item: ChecklistItem
  done_by: number
  done_at: Timestamp
  note: Generated<string>
  not_applicable: Generated<boolean>
}
export interface SignatureTable {
  id: Generated<number>
  entity_type: string
  entity_id: number
  item_id: number | null
  user_id: number
  name: string
  meaning: string
  at: Timestamp
  content_hash: string
  comment: Generated<string>
  voided_at: Timestamp | null
  void_reason: string | null
}
export interface AttachmentTable {
  id: Generated<number>
  entity_type: string
  entity_id: number
  file_name: string
  content_type: string
  size_bytes: number
  sha256: string
  content: Buffer
  uploaded_by: number
  uploaded_at: Timestamp
}

export interface TripTestTable {
  id: Generated<number>
  limit_id: number
  site_id: number
  limit_revision: number
  kind: 'full' | 'partial'
  scope: Generated<TestScope>
  method: (typeof TEST_METHODS)[number]
  injection_point: 'sensor' | 'transmitter_output' | null
  source_mode: 'mv_source' | 'tc_simulate' | null
  cold_junction_c: NullableNumeric
  procedure_ref: string
  device_serial: string
  calibrator_id: string
  calibrator_due_date: ColumnType<string | null, string | null, string | null>
  work_order: string
  bypass_id: number | null
  performed_at: Timestamp
  setpoint: Numeric
  tolerance: Numeric
  tolerance_unit: 'eu' | 'percent_span'
  tolerance_eu: Numeric
  as_found: NullableNumeric
  as_found_signal: ColumnType<{ value: number; unit: string } | null, string | null, string | null>
  as_found_result: AsFoundResultDto
  as_left: NullableNumeric
  as_left_result: AsLeftResultDto
  channels: ColumnType<ChannelResultDto[], string | undefined, string>
  voting: ColumnType<
    { architecture: string; required: number; tripped: number; acted: boolean } | null,
    string | null | undefined,
    string | null
  >
  closing_time_sec: NullableNumeric
  leak_test_passed: boolean | null
  stroke_percent: NullableNumeric
  precautions: ColumnType<TripTestPrecautions | Record<string, never>, string | undefined, string>
  reset_value: NullableNumeric
  latch_held: boolean | null
  reset_refused_while_active: boolean | null
  reset_accepted_after_return: boolean | null
  final_element_ok: boolean | null
  response_time_sec: NullableNumeric
  setpoint_restored_read_back: NullableNumeric
  passed: boolean
  fail_reasons: JsonValue<string[]>
  notes: string
  status: Generated<'recorded' | 'signed' | 'completed'>
  content_hash: string
  recorded_by: number
  created_at: Timestamp
  updated_at: Timestamp
  /** 'imported': brought from a former system by a history import (import_batch_id names it) */
  source: Generated<'recorded' | 'imported'>
  import_batch_id: number | null
  /** the tester of an imported test, as the file names them */
  tester_name: string | null
}
export interface LimitDegradationTable {
  id: Generated<number>
  limit_id: number
  test_id: number
  opened_at: Timestamp
  reasons: JsonValue<string[]>
  compensating_measures: ColumnType<string[] | null, string | null, string | null>
  repair_deadline: ColumnType<string | null, string | null, string | null>
  measures_signed_by: number | null
  measures_signed_at: Timestamp | null
  cleared_at: Timestamp | null
  cleared_by_test_id: number | null
  mttr_hours: NullableNumeric
  deadline_beyond_mttr: Generated<boolean>
  deadline_approved_by: number | null
  deadline_approved_at: Timestamp | null
  escalated_at: Timestamp | null
}
export interface TestDeferralTable {
  id: Generated<number>
  limit_id: number
  site_id: number
  status: Generated<DeferralStatus>
  original_due_date: ColumnType<string, string, string>
  new_due_date: ColumnType<string, string, string>
  reason: string
  compensating_measures: JsonValue<string[]>
  risk: JsonValue<DeferralRisk>
  required_role: Role
  content_hash: string
  requested_by: number
  requested_at: Timestamp
  decided_by: number | null
  decided_at: Timestamp | null
  decision_comment: Generated<string>
}
export interface ComponentTestIntervalTable {
  limit_id: number
  scope: ComponentScope
  interval_months: number
}
export interface DigestLogTable {
  site_id: number
  kind: string
  period: string
  sent_at: Timestamp
}

export interface BypassTable {
  id: Generated<number>
  limit_id: number
  site_id: number
  channel_instrument_id: number | null
  requested_by: number
  reason: string
  compensating_measures: JsonValue<string[]>
  planned_start: Timestamp
  planned_end: Timestamp
  status: Generated<BypassStatus>
  change_request_id: number | null
  authorized_at: Timestamp | null
  activated_at: Timestamp | null
  activated_by: number | null
  removed_at: Timestamp | null
  removed_by: number | null
  pv_clear_confirmed: boolean | null
  protection_restored_confirmed: boolean | null
  removal_note: string | null
  expiry_warned_at: Timestamp | null
  overdue_notified_at: Timestamp | null
  last_escalation_at: Timestamp | null
  created_at: Timestamp
  updated_at: Timestamp
  /** 'imported': brought from a former system by a history import (import_batch_id names it) */
  source: Generated<'recorded' | 'imported'>
  import_batch_id: number | null
}
export interface HandoverAckTable {
  id: Generated<number>
  area_id: number
  user_id: number
  at: Timestamp
  snapshot: JsonValue<unknown>
  content_hash: string
}
export interface ShiftHandoverTable {
  id: Generated<number>
  site_id: number
  status: Generated<ShiftHandoverStatus>
  notes: Generated<string>
  snapshot: JsonValue<HandoverSnapshot>
  state_hash: string
  content_hash: string
  handed_over_by: number
  handed_over_at: Timestamp
  accepted_by: number | null
  accepted_at: Timestamp | null
}
export interface ShiftHandoverAreaTable {
  handover_id: number
  area_id: number
}

export type AlarmUploadStatus = 'queued' | 'running' | 'done' | 'failed'
/** The columns both bulk uploads of the alarms feature (journal, process data) keep about a load's outcome. */
interface UploadOutcomeColumns {
  error: string | null
  first_at: Timestamp | null
  last_at: Timestamp | null
  file_path: string | null
  created_at: Timestamp
  finished_at: Timestamp | null
}
export interface AlarmJournalUploadTable extends UploadOutcomeColumns {
  id: Generated<number>
  site_id: number
  created_by: number
  file_name: string
  file_kind: 'csv' | 'xlsx'
  checksum: string | null
  time_zone: string
  mapping: JsonValue<Record<string, string>>
  status: ColumnType<AlarmUploadStatus, AlarmUploadStatus | undefined, AlarmUploadStatus>
  rows_read: Generated<number>
  rows_stored: Generated<number>
  rows_duplicate: Generated<number>
  rows_rejected: Generated<number>
  rejections: ColumnType<{ row: number; message: string }[], string | undefined, string>
  unmatched_tags: ColumnType<string[], string | undefined, string>
  unmatched_tag_count: Generated<number>
  duplicate_of: number | null
}
export interface AlarmEventTable {
  site_id: number
  occurred_at: Timestamp
  tag: string
  kind: number
  priority: number
  position: string
  message: string
  limit_id: number | null
  upload_id: number
  row_hash: string
}
export interface AlarmStateTable {
  id: Generated<number>
  site_id: number
  limit_id: number | null
  tag: string
  kind: 'shelved' | 'suppressed' | 'out_of_service'
  status: ColumnType<'active' | 'ended', 'active' | 'ended' | undefined, 'active' | 'ended'>
  reason: string
  started_by: number
  started_at: Timestamp
  until: Timestamp
  signature_id: number | null
  change_request_id: number | null
  ended_by: number | null
  ended_at: Timestamp | null
  end_note: string | null
}
export interface ProcessDataUploadTable extends UploadOutcomeColumns {
  id: Generated<number>
  site_id: number
  instrument_id: number | null
  created_by: number
  file_name: string
  checksum: string | null
  time_zone: string
  series: ColumnType<{ index: number; name: string }[], string | undefined, string>
  status: ColumnType<AlarmUploadStatus, AlarmUploadStatus | undefined, AlarmUploadStatus>
  rows_read: Generated<number>
  samples_stored: Generated<number>
  rows_rejected: Generated<number>
  rejections: ColumnType<{ row: number; message: string }[], string | undefined, string>
}
export interface ProcessSampleTable {
  upload_id: number
  series: number
  t: Timestamp
  value: number | null
}
export interface ReconciliationSourceTable {
  id: Generated<number>
  site_id: number
  name: string
  kind: SourceKind
  description: Generated<string>
  host: string | null
  port: number | null
  unit_id: number | null
  timeout_ms: Generated<number>
  register_map: JsonValue<unknown[]>
  column_mapping: JsonValue<Record<string, string>>
  area_ids: JsonValue<number[]>
  tolerances: JsonValue<Record<string, string>>
  schedule_hours: NullableNumeric
  active: Generated<boolean>
  next_run_at: Timestamp | null
  version: Generated<number>
  created_by: number | null
  created_at: Timestamp
  updated_at: Timestamp
}
export interface ReconciliationRunTable {
  id: Generated<number>
  source_id: number
  site_id: number
  trigger: RunTrigger
  outcome: RunOutcome
  started_at: Timestamp
  finished_at: Timestamp
  run_by: number | null
  file_name: string | null
  checksum: string | null
  rows_read: Generated<number>
  rows_ignored: Generated<number>
  limits_compared: Generated<number>
  attributes_compared: Generated<number>
  differences: Generated<number>
  findings_new: Generated<number>
  findings_reopened: Generated<number>
  findings_resolved: Generated<number>
  error: string | null
}
export interface FindingTable {
  id: Generated<number>
  site_id: number
  source_id: number
  limit_id: number | null
  tag: string
  attribute: Generated<string>
  kind: FindingKind
  state: Generated<FindingState>
  register_value: string | null
  device_value: string | null
  unit: string | null
  detail: Generated<string>
  present: Generated<boolean>
  first_run_id: number
  last_run_id: number
  first_seen_at: Timestamp
  last_seen_at: Timestamp
  opened_at: Timestamp
  reopen_count: Generated<number>
  acknowledged_by: number | null
  acknowledged_at: Timestamp | null
  change_request_id: number | null
  resolution: FindingResolution | null
  resolved_by: number | null
  resolved_at: Timestamp | null
  resolved_run_id: number | null
  accept_reason: string | null
  version: Generated<number>
}
export interface LimitReconciliationTable {
  limit_id: number
  source_id: number
  run_id: number
  at: Timestamp
  matched: boolean
  differences: JsonValue<string[]>
}

/** The database as Kysely sees it (kept by hand beside the migrations). */
export interface Database {
  app_user: AppUserTable
  site: SiteTable
  area: AreaTable
  role_assignment: RoleAssignmentTable
  sign_in_attempt: SignInAttemptTable
  audit_event: AuditEventTable
  audit_event_site: AuditEventSiteTable
  mail_outbox: MailOutboxTable
  job_schedule: JobScheduleTable
  sign_in_throttle: SignInThrottleTable
  session: SessionTable
  process: ProcessTable
  instrument: InstrumentTable
  limit_function: LimitFunctionTable
  limit_instrument: LimitInstrumentTable
  limit_revision: LimitRevisionTable
  instrument_revision: InstrumentRevisionTable
  import_batch: ImportBatchTable
  import_mapping: ImportMappingTable
  change_request: ChangeRequestTable
  change_proposal: ChangeProposalTable
  change_request_item: ChangeRequestItemTable
  change_request_editor: ChangeRequestEditorTable
  change_request_check: ChangeRequestCheckTable
  signature: SignatureTable
  attachment: AttachmentTable
  trip_test: TripTestTable
  limit_degradation: LimitDegradationTable
  digest_log: DigestLogTable
  test_deferral: TestDeferralTable
  component_test_interval: ComponentTestIntervalTable
  bypass: BypassTable
  handover_ack: HandoverAckTable
  alarm_journal_upload: AlarmJournalUploadTable
  alarm_event: AlarmEventTable
  alarm_state: AlarmStateTable
  process_data_upload: ProcessDataUploadTable
  process_sample: ProcessSampleTable
  demand: DemandTable
  shift_handover: ShiftHandoverTable
  shift_handover_area: ShiftHandoverAreaTable
  reconciliation_source: ReconciliationSourceTable
  reconciliation_run: ReconciliationRunTable
  finding: FindingTable
  limit_reconciliation: LimitReconciliationTable
}

/** Kinds of event in the demand and trip log. */
export const DEMAND_KINDS = ['real_demand', 'spurious_trip', 'dangerous_failure', 'failure_on_demand'] as const
export type DemandKind = (typeof DEMAND_KINDS)[number]
export type DemandOutcome = 'acted' | 'failed_to_act'
export type DemandStatus = 'recorded' | 'classified'
export interface DemandTable {
  id: Generated<number>
  site_id: number
  limit_id: number
  instrument_id: number | null
  kind: DemandKind
  outcome: DemandOutcome | null
  occurred_at: Timestamp
  description: string
  cause: Generated<string>
  evidence: Generated<string>
  work_order: Generated<string>
  whole_function: Generated<boolean>
  status: ColumnType<DemandStatus, DemandStatus | undefined, DemandStatus>
  counts: boolean | null
  dangerous_undetected: boolean | null
  classification_note: Generated<string>
  classified_by: number | null
  classified_at: Timestamp | null
  credited_as_test: Generated<boolean>
  credit_note: Generated<string>
  credited_by: number | null
  credited_at: Timestamp | null
  imported: Generated<boolean>
  recorded_by: number
  created_at: Timestamp
  updated_at: Timestamp
}

export type ProcessRow = Selectable<ProcessTable>
export type InstrumentRow = Selectable<InstrumentTable>
export type LimitFunctionRow = Selectable<LimitFunctionTable>

export type AppUserRow = Selectable<AppUserTable>
export type SiteRow = Selectable<SiteTable>
export type AuditEventRow = Selectable<AuditEventTable>
export type InsertableAuditEventRow = Insertable<AuditEventTable>

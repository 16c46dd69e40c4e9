import type { ColumnType, Generated, Insertable, Selectable } from 'kysely'

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
export interface AreaTable { id: Generated<number>, site_id: number, name: string }
export interface RoleAssignmentTable { user_id: number, site_id: number, role: string }
export interface SignInAttemptTable {
  id: Generated<number>
  at: Timestamp
  email: string
  ip: string
  success: boolean
  purpose: 'sign_in' | 'signature'
}
export interface AuditEventTable {
  id: Generated<number>
  occurred_at: Timestamp
  actor_id: number | null
  action: string
  entity_type: string
  entity_id: string | null
  before: Json
  after: Json
  reason: string | null
  batch_id: string | null
  request_id: string | null
  ip: string | null
  prev_hash: string
  hash: string
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
}
export interface JobScheduleTable {
  name: string
  interval_sec: number
  next_run_at: Timestamp
  locked_until: Timestamp | null
  last_run_at: Timestamp | null
  last_error: string | null
}
export interface SessionTable { sid: string, sess: unknown, expire: Timestamp }

/** The database as Kysely sees it (kept by hand beside the migrations). */
export interface Database {
  app_user: AppUserTable
  site: SiteTable
  area: AreaTable
  role_assignment: RoleAssignmentTable
  sign_in_attempt: SignInAttemptTable
  audit_event: AuditEventTable
  mail_outbox: MailOutboxTable
  job_schedule: JobScheduleTable
  session: SessionTable
}

export type AppUserRow = Selectable<AppUserTable>
export type SiteRow = Selectable<SiteTable>
export type AuditEventRow = Selectable<AuditEventTable>
export type InsertableAuditEventRow = Insertable<AuditEventTable>

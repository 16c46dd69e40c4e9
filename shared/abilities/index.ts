import { AbilityBuilder, createMongoAbility, type MongoAbility, type RawRuleOf } from '@casl/ability'
import type { Discipline } from '../schemas/change-requests.ts'
import type { Role, RoleAssignment } from '../schemas/users.ts'

/** Who may sign each discipline review of a change request (docs/change-requests.md#discipline-reviews). */
export const DISCIPLINE_REVIEWERS: Record<Discipline, readonly Role[]> = {
  operations: ['shift_supervisor'],
  process: ['safety_engineer'],
  instrumentation: ['control_engineer', 'technician'],
}

/** Actions of the workflows (docs/architecture.md), as CASL verbs. */
export type Action =
  | 'manage'
  | 'read'
  | 'create'
  | 'update'
  | 'delete'
  | 'assign_roles'
  | 'import'
  | 'submit'
  | 'approve'
  | 'implement'
  | 'close'
  | 'record'
  | 'witness'
  | 'accept'
  | 'request'
  | 'authorize'
  | 'activate'
  | 'remove'
  | 'review'
  | 'classify'
  | 'credit'
  | 'hand_over'
  | 'reconcile'
  | 'verify'

/** Subjects: PascalCase singular. Site-scoped subjects carry `siteId` (a Site carries `id`). */
export type SubjectName =
  | 'User'
  | 'Site'
  | 'Area'
  | 'Process'
  | 'Instrument'
  | 'Limit'
  | 'ChangeRequest'
  | 'ChangeProposal'
  | 'TripTest'
  | 'Bypass'
  | 'BypassReview'
  | 'Demand'
  | 'ShiftHandover'
  | 'AuditEvent'
  | 'Mail'
  | 'AlarmJournal'
  | 'AlarmState'
  | 'Replay'
  | 'ReconciliationSource'
  | 'Finding'
  | 'all'

export type AppAbility = MongoAbility<[Action, SubjectName | Record<string, unknown>]>
export type AppRule = RawRuleOf<AppAbility>

/** What the abilities need to know about the signed-in user. */
export interface AbilityUser {
  id: number
  roles: RoleAssignment[]
}

const SITE_SCOPED: SubjectName[] = [
  'Area',
  'Process',
  'Instrument',
  'Limit',
  'ChangeRequest',
  'TripTest',
  'Bypass',
  'ShiftHandover',
]

/** Builds the CASL rules for a user from their (site, role) assignments; none for anonymous users. */
export function defineRulesFor(user: AbilityUser | null): AppRule[] {
  const { can, cannot, rules } = new AbilityBuilder<AppAbility>(createMongoAbility)
  if (!user) return rules
  const sitesWith = (...roles: Role[]) => [
    ...new Set(user.roles.filter((r) => roles.includes(r.role)).map((r) => r.siteId)),
  ]
  const allSites = [...new Set(user.roles.map((r) => r.siteId))]
  const has = (...roles: Role[]) => sitesWith(...roles).length > 0

  // Everyone reads the register, tests, bypasses and change requests of their own sites.
  if (allSites.length) {
    can('read', 'Site', { id: { $in: allSites } })
    can('read', SITE_SCOPED, { siteId: { $in: allSites } })
  }
  can('read', 'User', { id: user.id })

  const admin = sitesWith('admin')
  if (admin.length) {
    can('create', 'Site')
    can(['read', 'update'], 'Site', { id: { $in: admin } })
    can(['create', 'update', 'delete'], 'Area', { siteId: { $in: admin } })
    can(['read', 'create', 'update'], 'User')
    can('assign_roles', 'User')
    cannot('assign_roles', 'User', { id: user.id }).because('Nobody can change their own roles')
    can('read', 'Mail')
  }
  // the audit trail of the sites where one is administrator, plant manager or auditor (docs/security.md, "Whose events
  // a reader sees"; the list's query applies the same scope); running the chain verifier is for auditors and admins
  const auditReader = sitesWith(...AUDIT_READER_ROLES)
  if (auditReader.length) can('read', 'AuditEvent', { siteId: { $in: auditReader } })
  if (has('admin', 'auditor')) can('verify', 'AuditEvent')

  const engineer = sitesWith('safety_engineer')
  if (engineer.length) {
    can(['create', 'update', 'delete'], ['Process', 'Instrument', 'Limit'], { siteId: { $in: engineer } })
    can('import', 'Limit', { siteId: { $in: engineer } })
    can(['create', 'update', 'submit', 'close', 'delete'], 'ChangeRequest', { siteId: { $in: engineer } })
  }
  const approver = sitesWith('approver')
  if (approver.length) {
    can('approve', 'ChangeRequest', { siteId: { $in: approver } })
    // separation of duties: never the proposer, never anyone who edited the request
    cannot('approve', 'ChangeRequest', { proposerId: user.id }).because('Nobody approves a change they proposed')
    cannot('approve', 'ChangeRequest', { editorIds: user.id }).because('Nobody approves a change they edited')
  }
  // discipline reviews before approval (docs/change-requests.md#discipline-reviews; common practice): operations by a
  // shift supervisor, process by a safety engineer, instrumentation by a control engineer or a technician; the rule
  // book keeps the proposer, editors and approvers of the same request out
  for (const [discipline, roles] of Object.entries(DISCIPLINE_REVIEWERS) as [Discipline, readonly Role[]][]) {
    const at = sitesWith(...roles)
    if (at.length) can('review', 'ChangeRequest', { siteId: { $in: at }, discipline })
  }
  // an emergency change before its approval is implemented only by a shift supervisor (below)
  const implementApproved = (siteIds: number[]) => {
    can('implement', 'ChangeRequest', { siteId: { $in: siteIds }, type: { $ne: 'emergency' } })
    can('implement', 'ChangeRequest', { siteId: { $in: siteIds }, type: 'emergency', status: { $ne: 'submitted' } })
  }
  const technician = sitesWith('technician')
  if (technician.length) {
    implementApproved(technician)
    can('record', 'TripTest', { siteId: { $in: technician } })
  }
  // control and SIS configuration work: a control engineer implements approved changes as a technician does
  // (docs/change-requests.md#roles); the rule book keeps an approver of the same request from implementing it
  const controlEngineer = sitesWith('control_engineer')
  if (controlEngineer.length) implementApproved(controlEngineer)
  const witness = sitesWith('safety_engineer', 'approver', 'shift_supervisor', 'technician')
  if (witness.length) can('witness', 'TripTest', { siteId: { $in: witness } })
  const supervisor = sitesWith('shift_supervisor')
  // an emergency change is implemented first by a shift supervisor, then approved within 24 h
  if (supervisor.length) can('implement', 'ChangeRequest', { siteId: { $in: supervisor }, type: 'emergency' })
  const acceptor = sitesWith('shift_supervisor', 'operator')
  if (acceptor.length) can('accept', 'TripTest', { siteId: { $in: acceptor } })
  const requester = sitesWith('safety_engineer', 'shift_supervisor', 'technician', 'operator')
  if (requester.length) can('request', 'Bypass', { siteId: { $in: requester } })
  const authorizer = sitesWith('approver', 'shift_supervisor', 'plant_manager')
  if (authorizer.length) can('authorize', 'Bypass', { siteId: { $in: authorizer } })
  const activator = sitesWith('shift_supervisor', 'technician', 'operator')
  if (activator.length) can(['activate', 'remove'], 'Bypass', { siteId: { $in: activator } })
  const reviewer = sitesWith('safety_engineer', 'approver', 'shift_supervisor', 'plant_manager', 'auditor')
  if (reviewer.length) can('review', 'BypassReview', { siteId: { $in: reviewer } })
  // alarm journals, figures, alarm states and replays (docs/alarms.md); who may start or end which state is the
  // alarm-state rule book's (shared/domain/rules/alarm-states.ts)
  if (allSites.length) can('read', ['AlarmJournal', 'AlarmState', 'Replay'], { siteId: { $in: allSites } })
  const alarmImporter = sitesWith('safety_engineer', 'shift_supervisor')
  if (alarmImporter.length) can('import', 'AlarmJournal', { siteId: { $in: alarmImporter } })
  if (engineer.length) can('create', 'Replay', { siteId: { $in: engineer } })
  // a technician starts no state and ends an out-of-service period (the return to service)
  const alarmStateStarter = sitesWith('operator', 'shift_supervisor', 'safety_engineer')
  if (alarmStateStarter.length) can('create', 'AlarmState', { siteId: { $in: alarmStateStarter } })
  const alarmStateEnder = sitesWith('operator', 'shift_supervisor', 'safety_engineer', 'technician')
  if (alarmStateEnder.length) can('update', 'AlarmState', { siteId: { $in: alarmStateEnder } })
  // demand and trip log: everyone at the site reads it, operators and supervisors (and engineers) record,
  // safety engineers classify and credit a demand as a proof test
  if (allSites.length) can('read', 'Demand', { siteId: { $in: allSites } })
  const demandRecorder = sitesWith('operator', 'shift_supervisor', 'safety_engineer')
  if (demandRecorder.length) can('record', 'Demand', { siteId: { $in: demandRecorder } })
  if (engineer.length) can(['classify', 'credit'], 'Demand', { siteId: { $in: engineer } })
  // the outgoing shift supervisor hands over, the incoming one accepts (docs/shift-handover.md)
  if (supervisor.length) can(['hand_over', 'accept'], 'ShiftHandover', { siteId: { $in: supervisor } })
  // reconciliation of the register with the plant (docs/reconciliation.md): everyone reads; safety engineers keep
  // the sources, run them and own the findings; plant managers may also accept a difference with a signature
  if (allSites.length) can('read', ['ReconciliationSource', 'Finding'], { siteId: { $in: allSites } })
  if (engineer.length) {
    can(['create', 'update', 'reconcile'], 'ReconciliationSource', { siteId: { $in: engineer } })
    can(['update', 'accept'], 'Finding', { siteId: { $in: engineer } })
  }
  const manager = sitesWith('plant_manager')
  if (manager.length) can('accept', 'Finding', { siteId: { $in: manager } })
  // change proposals (docs/change-requests.md#change-proposals): everyone at the site reads them; operators,
  // technicians, control engineers and shift supervisors raise them; safety engineers take them up or decline them
  if (allSites.length) can('read', 'ChangeProposal', { siteId: { $in: allSites } })
  const proposer = sitesWith('operator', 'technician', 'control_engineer', 'shift_supervisor')
  if (proposer.length) can('create', 'ChangeProposal', { siteId: { $in: proposer } })
  if (engineer.length) can('review', 'ChangeProposal', { siteId: { $in: engineer } })
  return rules
}

/** Creates the ability from rules (the same call on server and client). */
export function createAppAbility(rules: AppRule[] = []): AppAbility {
  return createMongoAbility<AppAbility>(rules)
}

/** The roles that read a site's audit trail (docs/security.md, "Whose events a reader sees"). */
export const AUDIT_READER_ROLES = ['admin', 'plant_manager', 'auditor'] as const satisfies readonly Role[]

/**
 * The part of the audit trail a user reads (docs/security.md, "Whose events a reader sees"): the sites of their
 * `read AuditEvent` rule, and, for an administrator, the installation-wide events about no site's account too.
 */
export function auditReadScope(user: AbilityUser | null): { siteIds: number[]; installationWide: boolean } {
  if (!user) return { siteIds: [], installationWide: false }
  return {
    siteIds: sitesWithRole(user, ...AUDIT_READER_ROLES),
    installationWide: sitesWithRole(user, 'admin').length > 0,
  }
}

/** Site ids where the user holds one of the roles. */
export function sitesWithRole(user: AbilityUser, ...roles: Role[]): number[] {
  return [...new Set(user.roles.filter((r) => roles.includes(r.role)).map((r) => r.siteId))]
}

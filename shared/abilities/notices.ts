import type { Role } from '../schemas/users.ts'

/**
 * Who each e-mail notice goes to, by role at the record's site (docs/architecture.md#e-mail-notices). The services and
 * jobs that send a notice look its readers up here; the discipline reviewers of a change request are
 * `DISCIPLINE_REVIEWERS` (./index.ts).
 */
export const NOTICE_RECIPIENTS = {
  /** A change request is submitted for approval (not to its proposer). */
  changeSubmitted: ['approver'],
  /** A temporary change has expired and is not yet reverted (with its proposer), once a day. */
  temporaryChangeExpired: ['shift_supervisor'],
  /** An emergency change is still unapproved after the policy's hours. */
  emergencyChangeUnapproved: ['approver', 'plant_manager'],
  /** A change proposal is raised. */
  proposalRaised: ['safety_engineer'],
  /** A reconciliation run finds new or reopened differences. */
  reconciliationFindings: ['safety_engineer', 'shift_supervisor'],
  /** The daily digest of overdue and due-soon trip tests. */
  tripTestDigest: ['technician', 'safety_engineer'],
  /** A trip test failed and its limit is degraded. */
  tripTestFailed: ['safety_engineer', 'shift_supervisor'],
  /** A degraded limit's repair deadline is set beyond the MTTR: the plant manager approves it. */
  repairDeadlineBeyondMttr: ['plant_manager'],
  /** A degraded limit's repair deadline has passed. */
  repairDeadlinePassed: ['plant_manager', 'shift_supervisor'],
  /** A bypass is requested (not to its requester). */
  bypassRequested: ['shift_supervisor'],
  /** An active bypass is past its planned end. */
  bypassOverdue: ['shift_supervisor'],
  /** An overdue bypass is still active, every escalation interval of the policy. */
  bypassEscalated: ['plant_manager'],
  /** An audit checkpoint is signed (to the auditors of every site). */
  auditCheckpoint: ['auditor'],
} as const satisfies Record<string, readonly Role[]>

export type Notice = keyof typeof NOTICE_RECIPIENTS

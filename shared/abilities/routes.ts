import type { Role } from '../schemas/users.ts'

/**
 * Who gets past authorization on each state-changing API route: the expected answers of the authorization matrix
 * (tests/api/authorization-matrix.api.test.ts), written beside the CASL rules (./index.ts) and the rule books
 * (shared/domain/rules/) they follow. Every mutating route of the app must be listed here, or the matrix fails.
 *
 * - `roles`: the roles that pass at a site where they hold the role ('signed-in': every signed-in user; 'anyone':
 *   anonymous callers too). Everyone else signed in gets 403.
 * - `otherSite`: the answer for a user of another site: 'missing' (exactly the answer for an id that does not exist,
 *   404 for an id in the path; docs/security.md#authorization), 403 (a site named in the body is not theirs), or
 *   'same' (the route names no site: the answer is the one at their own site).
 */
export interface RouteAccess {
  roles: readonly Role[] | 'signed-in' | 'anyone'
  otherSite: 'missing' | 403 | 'same'
}

const ENGINEER = ['safety_engineer'] as const
const ADMIN = ['admin'] as const

export const ROUTE_ACCESS: Record<string, RouteAccess> = {
  // sign-in and the test clock (NODE_ENV=test only) come before any user is known
  'POST /api/session': { roles: 'anyone', otherSite: 'same' },
  'DELETE /api/session': { roles: 'anyone', otherSite: 'same' },
  'POST /api/test/clock': { roles: 'anyone', otherSite: 'same' },
  'POST /api/account/password': { roles: 'signed-in', otherSite: 'same' },

  // accounts, sites and areas: administrators of the site
  'POST /api/users': { roles: ADMIN, otherSite: 403 },
  'PATCH /api/users/:id': { roles: ADMIN, otherSite: 403 },
  'POST /api/sites': { roles: ADMIN, otherSite: 'same' },
  'PATCH /api/sites/:id': { roles: ADMIN, otherSite: 'missing' },
  'POST /api/areas': { roles: ADMIN, otherSite: 403 },
  'PATCH /api/areas/:id': { roles: ADMIN, otherSite: 'missing' },

  // the register: safety engineers
  'POST /api/processes': { roles: ENGINEER, otherSite: 'missing' },
  'PATCH /api/processes/:id': { roles: ENGINEER, otherSite: 'missing' },
  'POST /api/instruments': { roles: ENGINEER, otherSite: 'missing' },
  'PATCH /api/instruments/:id': { roles: ENGINEER, otherSite: 'missing' },
  'POST /api/limits': { roles: ENGINEER, otherSite: 'missing' },
  'PATCH /api/limits/:id': { roles: ENGINEER, otherSite: 'missing' },
  'DELETE /api/limits/:id': { roles: ENGINEER, otherSite: 'missing' },
  'POST /api/imports': { roles: ENGINEER, otherSite: 403 },
  'POST /api/imports/:id/commit': { roles: ENGINEER, otherSite: 'missing' },
  // the history import (last tests, commissioning dates, past bypasses): who imports the register
  'POST /api/history-imports': { roles: ENGINEER, otherSite: 403 },
  'POST /api/history-imports/:id/commit': { roles: ENGINEER, otherSite: 'missing' },

  // degraded functions and test deferrals (docs/trip-tests.md)
  'POST /api/limits/:id/degradation': { roles: ['shift_supervisor'], otherSite: 'missing' },
  'POST /api/limits/:id/degradation/deadline-approval': { roles: ['plant_manager'], otherSite: 'missing' },
  'POST /api/test-deferrals': { roles: ['technician', 'safety_engineer'], otherSite: 'missing' },
  // decided by the role the deferral requires (an approver, or a plant manager beyond the site's limit): the matrix's
  // deferral requires an approver
  'POST /api/test-deferrals/:id/approval': { roles: ['approver'], otherSite: 'missing' },
  'POST /api/test-deferrals/:id/rejection': { roles: ['approver'], otherSite: 'missing' },

  // trip tests: technicians record, witnesses and acceptors sign (docs/trip-tests.md)
  'POST /api/trip-tests': { roles: ['technician'], otherSite: 'missing' },
  // only the technician who recorded the test corrects it: a person, not a role (the matrix's accounts did not)
  'PUT /api/trip-tests/:id': { roles: [], otherSite: 'missing' },
  // as a witness (the matrix's call); the acceptance signature is a shift supervisor's or an operator's
  'POST /api/trip-tests/:id/signatures': {
    roles: ['technician', 'safety_engineer', 'approver', 'shift_supervisor'],
    otherSite: 'missing',
  },
  'POST /api/trip-tests/:id/attachments': { roles: ['technician'], otherSite: 'missing' },
  'POST /api/trip-tests/digest-runs': { roles: ADMIN, otherSite: 403 },

  // bypasses (docs/bypasses.md)
  'POST /api/bypasses': {
    roles: ['safety_engineer', 'shift_supervisor', 'technician', 'operator'],
    otherSite: 'missing',
  },
  'POST /api/bypasses/:id/authorizations': {
    roles: ['approver', 'shift_supervisor', 'plant_manager'],
    otherSite: 'missing',
  },
  'POST /api/bypasses/:id/rejections': {
    roles: ['approver', 'shift_supervisor', 'plant_manager'],
    otherSite: 'missing',
  },
  'POST /api/bypasses/:id/activation': { roles: ['shift_supervisor', 'technician', 'operator'], otherSite: 'missing' },
  'POST /api/bypasses/:id/removal': { roles: ['shift_supervisor', 'technician', 'operator'], otherSite: 'missing' },
  // the requester (whatever their role) or an authorizer of the site
  'POST /api/bypasses/:id/cancellation': {
    roles: ['approver', 'shift_supervisor', 'plant_manager'],
    otherSite: 'missing',
  },

  // shift handover: shift supervisors (docs/shift-handover.md)
  'POST /api/shift-handovers': { roles: ['shift_supervisor'], otherSite: 'missing' },
  'POST /api/shift-handovers/:id/acceptance': { roles: ['shift_supervisor'], otherSite: 'missing' },

  // management of change (docs/change-requests.md)
  'POST /api/change-requests': { roles: ENGINEER, otherSite: 403 },
  // change proposals (docs/change-requests.md#change-proposals)
  'POST /api/change-proposals': {
    roles: ['operator', 'technician', 'control_engineer', 'shift_supervisor'],
    otherSite: 403,
  },
  'POST /api/change-proposals/:id/take-up': { roles: ENGINEER, otherSite: 'missing' },
  'POST /api/change-proposals/:id/decline': { roles: ENGINEER, otherSite: 'missing' },
  'PATCH /api/change-requests/:id': { roles: ENGINEER, otherSite: 'missing' },
  'POST /api/change-requests/:id/submission': { roles: ENGINEER, otherSite: 'missing' },
  'POST /api/change-requests/:id/withdrawal': { roles: ENGINEER, otherSite: 'missing' },
  // a discipline review (the matrix's call signs the instrumentation review;
  // docs/change-requests.md#discipline-reviews)
  'POST /api/change-requests/:id/reviews': { roles: ['control_engineer', 'technician'], otherSite: 'missing' },
  'POST /api/change-requests/:id/approvals': { roles: ['approver'], otherSite: 'missing' },
  'POST /api/change-requests/:id/rejections': { roles: ['approver'], otherSite: 'missing' },
  // a shift supervisor implements emergency changes only; the matrix's change is a permanent one
  'POST /api/change-requests/:id/implementations': {
    roles: ['technician', 'control_engineer'],
    otherSite: 'missing',
  },
  'POST /api/change-requests/:id/read-back-checks': { roles: ['technician', 'control_engineer'], otherSite: 'missing' },
  'POST /api/change-requests/:id/closure': { roles: ENGINEER, otherSite: 'missing' },
  'PUT /api/change-requests/:id/checklist/:item': { roles: ENGINEER, otherSite: 'missing' },
  'POST /api/change-requests/:id/attachments': { roles: ENGINEER, otherSite: 'missing' },

  // the audit trail's chain check covers the whole installation (docs/security.md, "Audit trail integrity")
  'POST /api/audit-events/verify': { roles: ['admin', 'auditor'], otherSite: 'same' },

  // demands and trips (docs/demands.md)
  'POST /api/demands': { roles: ['operator', 'shift_supervisor', 'safety_engineer'], otherSite: 'missing' },
  'POST /api/demands/:id/classification': { roles: ENGINEER, otherSite: 'missing' },
  'POST /api/demands/:id/credit': { roles: ENGINEER, otherSite: 'missing' },
  'PUT /api/demands/assumptions/:limitId': { roles: ENGINEER, otherSite: 'missing' },
  // a change request from an observed failure rate (docs/demands.md); another site's limit is not among the rates
  'POST /api/demands/failure-rates/change-request': { roles: ENGINEER, otherSite: 'missing' },

  // alarms (docs/alarms.md)
  'POST /api/alarm-journals': { roles: ['safety_engineer', 'shift_supervisor'], otherSite: 403 },
  // shelving (the matrix's call) is an operator's or a shift supervisor's; a suppression by design a safety
  // engineer's (shared/domain/rules/alarm-states.ts)
  'POST /api/alarm-states': { roles: ['operator', 'shift_supervisor'], otherSite: 403 },
  // the return to service of an alarm out of service (the demo's state): technician, operator or shift supervisor
  'POST /api/alarm-states/:id/end': { roles: ['operator', 'shift_supervisor', 'technician'], otherSite: 'missing' },
  'POST /api/replays': { roles: ENGINEER, otherSite: 403 },
  'POST /api/replays/:id/run': { roles: 'signed-in', otherSite: 'missing' },

  // reconciliation (docs/reconciliation.md)
  'POST /api/reconciliation-sources': { roles: ENGINEER, otherSite: 403 },
  'PATCH /api/reconciliation-sources/:id': { roles: ENGINEER, otherSite: 'missing' },
  'POST /api/reconciliation-sources/:id/reads': { roles: ENGINEER, otherSite: 'missing' },
  'POST /api/reconciliation-sources/:id/runs': { roles: ENGINEER, otherSite: 'missing' },
  'POST /api/reconciliation-sources/:id/exports': { roles: ENGINEER, otherSite: 'missing' },
  'POST /api/findings/:id/acknowledgement': { roles: ENGINEER, otherSite: 'missing' },
  'POST /api/findings/:id/change-request': { roles: ENGINEER, otherSite: 'missing' },
  'POST /api/findings/:id/acceptance': { roles: ['safety_engineer', 'plant_manager'], otherSite: 'missing' },
}

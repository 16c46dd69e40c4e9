// The roles a user holds per site and their display names, without zod: the app's layout and the register screen
// read the labels on first load, and the validation library is not part of that load (docs/architecture.md#first-load).

/** The roles a user holds per site (README.md#roles). */
export const ROLES = [
  'admin',
  'safety_engineer',
  'approver',
  'shift_supervisor',
  'technician',
  'operator',
  'plant_manager',
  'auditor',
  'control_engineer',
] as const
export type Role = (typeof ROLES)[number]

/** Display names for roles. */
export const ROLE_LABELS: Record<Role, string> = {
  admin: 'Administrator',
  safety_engineer: 'Safety engineer',
  approver: 'Approver',
  shift_supervisor: 'Shift supervisor',
  technician: 'Maintenance technician',
  operator: 'Operator',
  plant_manager: 'Plant manager',
  auditor: 'Auditor',
  control_engineer: 'Control engineer',
}

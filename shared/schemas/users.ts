import { z } from 'zod'
import { ROLES } from '../domain/roles.ts'

// the roles and their labels live in shared/domain/roles.ts, without zod (the first load reads the labels)
export { ROLE_LABELS, ROLES, type Role } from '../domain/roles.ts'
export const RoleSchema = z.enum(ROLES)

/** A (site, role) pair held by a user. */
export const RoleAssignmentSchema = z.object({ siteId: z.number().int().positive(), role: RoleSchema })
export type RoleAssignment = z.infer<typeof RoleAssignmentSchema>

/** Minimum password length (OWASP ASVS 4.0 2.1.1: at least 12 characters). */
export const PASSWORD_MIN_LENGTH = 12

export const PasswordSchema = z
  .string()
  .min(PASSWORD_MIN_LENGTH, `Use at least ${PASSWORD_MIN_LENGTH} characters`)
  .max(128)

export const UserSchema = z.object({
  id: z.number().int(),
  email: z.email(),
  displayName: z.string(),
  active: z.boolean(),
  roles: z.array(RoleAssignmentSchema),
  createdAt: z.string(),
})
export type User = z.infer<typeof UserSchema>

export const CreateUserInputSchema = z.object({
  email: z.email('Enter a valid e-mail address').trim().toLowerCase(),
  displayName: z.string().trim().min(1, 'Enter a name').max(120),
  password: PasswordSchema,
  roles: z.array(RoleAssignmentSchema).default([]),
})
export type CreateUserInput = z.infer<typeof CreateUserInputSchema>

export const UpdateUserInputSchema = z
  .object({
    displayName: z.string().trim().min(1).max(120).optional(),
    active: z.boolean().optional(),
    roles: z.array(RoleAssignmentSchema).optional(),
    password: PasswordSchema.optional(),
  })
  .refine((v) => Object.keys(v).length > 0, { message: 'Nothing to change' })
export type UpdateUserInput = z.infer<typeof UpdateUserInputSchema>

export const ChangeOwnPasswordInputSchema = z.object({
  currentPassword: z.string().min(1, 'Enter your current password'),
  newPassword: PasswordSchema,
})
export type ChangeOwnPasswordInput = z.infer<typeof ChangeOwnPasswordInputSchema>

export const SignInInputSchema = z.object({
  email: z.string().trim().toLowerCase().min(1, 'Enter your e-mail address').max(254),
  password: z.string().min(1, 'Enter your password').max(128),
})
export type SignInInput = z.infer<typeof SignInInputSchema>

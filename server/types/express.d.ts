import type { AppAbility } from '../../shared/abilities/index.ts'
import type { RoleAssignment } from '../../shared/schemas/users.ts'
import type { AuditContext } from '../features/audit/audit.repository.ts'

export interface CurrentUser {
  id: number
  email: string
  displayName: string
  roles: RoleAssignment[]
}

declare global {
  namespace Express {
    interface Request {
      id: string
      user: CurrentUser | null
      ability: AppAbility
      audit: AuditContext
    }
  }
}

declare module 'express-session' {
  interface SessionData {
    userId?: number
    csrfToken?: string
    signedInAt?: number
    lastSeenAt?: number
  }
}

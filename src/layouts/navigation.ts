import { mdiAccountCircleOutline, mdiAccountGroupOutline, mdiEmailOutline, mdiFactory, mdiHistory, mdiHomeOutline } from '@mdi/js'
import type { Action, SubjectName } from '@shared/abilities/index.ts'

export interface NavItem { title: string, to: string, icon: string, can?: [Action, SubjectName], test: string }

/** The navigation drawer's sections; each shows only to users whose ability allows it. */
export const NAV_ITEMS: NavItem[] = [
  { title: 'Home', to: '/', icon: mdiHomeOutline, test: 'nav-home' },
  { title: 'Audit trail', to: '/audit', icon: mdiHistory, can: ['read', 'AuditEvent'], test: 'nav-audit' },
  { title: 'Users', to: '/admin/users', icon: mdiAccountGroupOutline, can: ['create', 'User'], test: 'nav-users' },
  { title: 'Sites and policies', to: '/admin/sites', icon: mdiFactory, can: ['create', 'Site'], test: 'nav-sites' },
  { title: 'Mail', to: '/mail', icon: mdiEmailOutline, can: ['read', 'Mail'], test: 'nav-mail' },
  { title: 'My account', to: '/account', icon: mdiAccountCircleOutline, test: 'nav-account' },
]

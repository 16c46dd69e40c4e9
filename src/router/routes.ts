import type { RouteRecordRaw } from 'vue-router'
import accountRoutes from '@/features/account/routes'
import adminRoutes from '@/features/admin/routes'
import auditRoutes from '@/features/audit/routes'
import authRoutes from '@/features/auth/routes'
import homeRoutes from '@/features/home/routes'
import mailRoutes from '@/features/mail/routes'

export const routes: RouteRecordRaw[] = [
  ...authRoutes,
  ...homeRoutes,
  ...adminRoutes,
  ...accountRoutes,
  ...auditRoutes,
  ...mailRoutes,
  { path: '/:pathMatch(.*)*', name: 'not-found', component: () => import('@/features/home/views/NotFoundView.vue') },
]

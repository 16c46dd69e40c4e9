import type { RouteRecordRaw } from 'vue-router'
import accountRoutes from '@/features/account/routes'
import alarmRoutes from '@/features/alarms/routes'
import adminRoutes from '@/features/admin/routes'
import auditRoutes from '@/features/audit/routes'
import authRoutes from '@/features/auth/routes'
import bypassRoutes from '@/features/bypasses/routes'
import changeRequestRoutes from '@/features/change-requests/routes'
import changeProposalRoutes from '@/features/change-proposals/routes'
import demandRoutes from '@/features/demands/routes'
import homeRoutes from '@/features/home/routes'
import mailRoutes from '@/features/mail/routes'
import reconciliationRoutes from '@/features/reconciliation/routes'
import registerRoutes from '@/features/register/routes'
import shiftHandoverRoutes from '@/features/shift-handover/routes'
import tripTestRoutes from '@/features/trip-tests/routes'

export const routes: RouteRecordRaw[] = [
  ...authRoutes,
  ...homeRoutes,
  ...registerRoutes,
  ...changeRequestRoutes,
  ...changeProposalRoutes,
  ...tripTestRoutes,
  ...demandRoutes,
  ...bypassRoutes,
  ...shiftHandoverRoutes,
  ...alarmRoutes,
  ...reconciliationRoutes,
  ...adminRoutes,
  ...accountRoutes,
  ...auditRoutes,
  ...mailRoutes,
  { path: '/:pathMatch(.*)*', name: 'not-found', component: () => import('@/features/home/views/NotFoundView.vue') },
]

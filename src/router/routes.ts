import type { RouteRecordRaw } from 'vue-router'
import alarmRoutes from '@/features/alarms/routes'
import auditRoutes from '@/features/audit/routes'
import bypassRoutes from '@/features/bypasses/routes'
import changeRequestRoutes from '@/features/change-requests/routes'
import changeProposalRoutes from '@/features/change-proposals/routes'
import demandRoutes from '@/features/demands/routes'
import historyRoutes from '@/features/history/routes'
import homeRoutes from '@/features/home/routes'
import mailRoutes from '@/features/mail/routes'
import reconciliationRoutes from '@/features/reconciliation/routes'
import registerRoutes from '@/features/register/routes'
import sessionRoutes from '@/features/session/routes'
import shiftHandoverRoutes from '@/features/shift-handover/routes'
import siteRoutes from '@/features/sites/routes'
import tripTestRoutes from '@/features/trip-tests/routes'
import userRoutes from '@/features/users/routes'

export const routes: RouteRecordRaw[] = [
  ...sessionRoutes,
  ...homeRoutes,
  ...registerRoutes,
  ...historyRoutes,
  ...changeRequestRoutes,
  ...changeProposalRoutes,
  ...tripTestRoutes,
  ...demandRoutes,
  ...bypassRoutes,
  ...shiftHandoverRoutes,
  ...alarmRoutes,
  ...reconciliationRoutes,
  ...userRoutes,
  ...siteRoutes,
  ...auditRoutes,
  ...mailRoutes,
  { path: '/:pathMatch(.*)*', name: 'not-found', component: () => import('@/features/home/views/NotFoundView.vue') },
]

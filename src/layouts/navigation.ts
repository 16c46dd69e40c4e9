import {
  mdiAccountCircleOutline,
  mdiAccountGroupOutline,
  mdiAlarmLight,
  mdiChartBellCurveCumulative,
  mdiChartBoxOutline,
  mdiClipboardCheckOutline,
  mdiClipboardTextClockOutline,
  mdiCompareHorizontal,
  mdiEmailOutline,
  mdiFactory,
  mdiFormatListChecks,
  mdiGauge,
  mdiHistory,
  mdiHomeOutline,
  mdiLightbulbOnOutline,
  mdiLightningBoltOutline,
  mdiPauseCircleOutline,
  mdiPipeDisconnected,
  mdiSwapHorizontal,
} from '@mdi/js'
import type { Action, SubjectName } from '@shared/abilities/index.ts'

export interface NavItem {
  title: string
  to: string
  icon: string
  can?: [Action, SubjectName]
  test: string
}

/** The navigation drawer's sections; each shows only to users whose ability allows it. */
export const NAV_ITEMS: NavItem[] = [
  { title: 'Home', to: '/', icon: mdiHomeOutline, test: 'nav-home' },
  { title: 'Register', to: '/register', icon: mdiFormatListChecks, can: ['read', 'Limit'], test: 'nav-register' },
  {
    title: 'Instruments',
    to: '/register/instruments',
    icon: mdiGauge,
    can: ['read', 'Limit'],
    test: 'nav-instruments',
  },
  {
    title: 'Processes',
    to: '/register/processes',
    icon: mdiPipeDisconnected,
    can: ['read', 'Limit'],
    test: 'nav-processes',
  },
  { title: 'Changes', to: '/changes', icon: mdiSwapHorizontal, test: 'nav-changes' },
  {
    title: 'Change proposals',
    to: '/proposals',
    icon: mdiLightbulbOnOutline,
    can: ['read', 'ChangeProposal'],
    test: 'nav-proposals',
  },
  { title: 'Trip tests', to: '/tests', icon: mdiClipboardCheckOutline, can: ['read', 'TripTest'], test: 'nav-tests' },
  {
    title: 'Demands and trips',
    to: '/demands',
    icon: mdiLightningBoltOutline,
    can: ['read', 'Demand'],
    test: 'nav-demands',
  },
  { title: 'Bypasses', to: '/bypasses', icon: mdiPauseCircleOutline, test: 'nav-bypasses' },
  {
    title: 'Bypass review',
    to: '/bypasses/review',
    icon: mdiChartBoxOutline,
    can: ['review', 'BypassReview'],
    test: 'nav-bypass-review',
  },
  {
    title: 'Risk erosion',
    to: '/bypasses/risk',
    icon: mdiChartBellCurveCumulative,
    can: ['review', 'BypassReview'],
    test: 'nav-risk-erosion',
  },
  { title: 'Alarm performance', to: '/alarms', icon: mdiAlarmLight, test: 'nav-alarms' },
  {
    title: 'Register vs plant',
    to: '/reconciliation',
    icon: mdiCompareHorizontal,
    can: ['read', 'Finding'],
    test: 'nav-reconciliation',
  },
  { title: 'Shift handover', to: '/shift-handover', icon: mdiClipboardTextClockOutline, test: 'nav-shift-handover' },
  { title: 'Audit trail', to: '/audit', icon: mdiHistory, can: ['read', 'AuditEvent'], test: 'nav-audit' },
  { title: 'Users', to: '/admin/users', icon: mdiAccountGroupOutline, can: ['create', 'User'], test: 'nav-users' },
  { title: 'Sites and policies', to: '/admin/sites', icon: mdiFactory, can: ['create', 'Site'], test: 'nav-sites' },
  { title: 'Mail', to: '/mail', icon: mdiEmailOutline, can: ['read', 'Mail'], test: 'nav-mail' },
  { title: 'My account', to: '/account', icon: mdiAccountCircleOutline, test: 'nav-account' },
]

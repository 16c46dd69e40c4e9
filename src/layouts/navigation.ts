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

/** One entry of the drawer; `can`, the ability it needs (none: every signed-in user sees it). */
function navItem(title: string, to: string, icon: string, test: string, can?: [Action, SubjectName]): NavItem {
  return can ? { title, to, icon, test, can } : { title, to, icon, test }
}

const REVIEW_BYPASSES: [Action, SubjectName] = ['review', 'BypassReview']

/** The navigation drawer's sections; each shows only to users whose ability allows it. */
export const NAV_ITEMS: NavItem[] = [
  navItem('Home', '/', mdiHomeOutline, 'nav-home'),
  navItem('Register', '/register', mdiFormatListChecks, 'nav-register', ['read', 'Limit']),
  navItem('Instruments', '/register/instruments', mdiGauge, 'nav-instruments', ['read', 'Limit']),
  navItem('Processes', '/register/processes', mdiPipeDisconnected, 'nav-processes', ['read', 'Limit']),
  navItem('Changes', '/changes', mdiSwapHorizontal, 'nav-changes'),
  navItem('Change proposals', '/proposals', mdiLightbulbOnOutline, 'nav-proposals', ['read', 'ChangeProposal']),
  navItem('Trip tests', '/tests', mdiClipboardCheckOutline, 'nav-tests', ['read', 'TripTest']),
  navItem('Demands and trips', '/demands', mdiLightningBoltOutline, 'nav-demands', ['read', 'Demand']),
  navItem('Bypasses', '/bypasses', mdiPauseCircleOutline, 'nav-bypasses'),
  navItem('Bypass review', '/bypasses/review', mdiChartBoxOutline, 'nav-bypass-review', REVIEW_BYPASSES),
  navItem('Risk erosion', '/bypasses/risk', mdiChartBellCurveCumulative, 'nav-risk-erosion', REVIEW_BYPASSES),
  navItem('Alarm performance', '/alarms', mdiAlarmLight, 'nav-alarms'),
  navItem('Register vs plant', '/reconciliation', mdiCompareHorizontal, 'nav-reconciliation', ['read', 'Finding']),
  navItem('Shift handover', '/shift-handover', mdiClipboardTextClockOutline, 'nav-shift-handover'),
  navItem('Audit trail', '/audit', mdiHistory, 'nav-audit', ['read', 'AuditEvent']),
  navItem('Users', '/admin/users', mdiAccountGroupOutline, 'nav-users', ['create', 'User']),
  navItem('Sites and policies', '/admin/sites', mdiFactory, 'nav-sites', ['create', 'Site']),
  navItem('Mail', '/mail', mdiEmailOutline, 'nav-mail', ['read', 'Mail']),
  navItem('My account', '/account', mdiAccountCircleOutline, 'nav-account'),
]

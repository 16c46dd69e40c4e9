import {
  mdiCancel,
  mdiCheckCircleOutline,
  mdiClockAlertOutline,
  mdiCloseCircleOutline,
  mdiPauseCircleOutline,
  mdiProgressClock,
  mdiShieldCheckOutline,
  mdiTimerSandComplete,
} from '@mdi/js'
import type { BypassDto, BypassStatus } from '@shared/schemas/bypasses.ts'

// Labels, colours and number formatting of the bypass screens.

export const STATUS_LABELS: Record<BypassStatus, string> = {
  requested: 'Waiting for authorization',
  authorized: 'Authorized, not yet in force',
  rejected: 'Rejected',
  active: 'Bypassed now',
  removed: 'Removed',
  cancelled: 'Cancelled',
  lapsed: 'Lapsed',
}
export const STATUS_SHORT: Record<BypassStatus, string> = {
  requested: 'Requested',
  authorized: 'Authorized',
  rejected: 'Rejected',
  active: 'Active',
  removed: 'Removed',
  cancelled: 'Cancelled',
  lapsed: 'Lapsed',
}
export const STATUS_STYLE: Record<
  BypassStatus,
  { color: string; variant: 'flat' | 'tonal' | 'outlined'; icon: string }
> = {
  requested: { color: 'info', variant: 'tonal', icon: mdiProgressClock },
  authorized: { color: 'primary', variant: 'tonal', icon: mdiCheckCircleOutline },
  rejected: { color: 'secondary', variant: 'outlined', icon: mdiCloseCircleOutline },
  active: { color: 'warning', variant: 'flat', icon: mdiPauseCircleOutline },
  removed: { color: 'success', variant: 'outlined', icon: mdiShieldCheckOutline },
  cancelled: { color: 'secondary', variant: 'outlined', icon: mdiCancel },
  lapsed: { color: 'secondary', variant: 'outlined', icon: mdiTimerSandComplete },
}
export const OVERDUE_STYLE = { color: 'error', variant: 'flat' as const, icon: mdiClockAlertOutline }

/**
 * The order of the list: what is in force first (overdue before active), then what waits for a decision, then
 * history.
 */
export const STATUS_RANK: Record<BypassStatus, number> = {
  active: 1,
  authorized: 2,
  requested: 3,
  removed: 4,
  lapsed: 5,
  rejected: 6,
  cancelled: 7,
}
export const rank = (b: BypassDto) => (b.overdue ? 0 : STATUS_RANK[b.status])

export const MEANING_LABELS: Record<string, string> = { authorized: 'Authorized', rejected: 'Rejected' }

const SUPERSCRIPT: Record<string, string> = {
  '-': '⁻',
  0: '⁰',
  1: '¹',
  2: '²',
  3: '³',
  4: '⁴',
  5: '⁵',
  6: '⁶',
  7: '⁷',
  8: '⁸',
  9: '⁹',
}

/** Scientific notation as people write it: `2.3 × 10⁻³`. */
export function sci(v: number | null | undefined, digits = 2): string {
  if (v === null || v === undefined || !Number.isFinite(v)) return '—'
  if (v === 0) return '0'
  const [mant, exp] = v.toExponential(digits - 1).split('e')
  const e = Number(exp)
  if (e === 0) return mant
  return `${mant} × 10${String(e)
    .split('')
    .map((c) => SUPERSCRIPT[c] ?? c)
    .join('')}`
}

/** A risk reduction factor, rounded to a readable figure. */
export function rrfText(v: number): string {
  if (!Number.isFinite(v)) return '—'
  if (v >= 100) return Math.round(v).toLocaleString('en-US')
  return (Math.round(v * 10) / 10).toLocaleString('en-US')
}

export const bandText = (band: 1 | 2 | 3 | 4 | 'none') => (band === 'none' ? 'Below SIL 1' : `SIL ${band}`)

/** People named on a bypass (requester and authorizers), to offer as filter choices. */
export function peopleOf(items: BypassDto[]) {
  const requesters = new Map<number, string>()
  const authorizers = new Map<number, string>()
  for (const b of items) {
    requesters.set(b.requestedById, b.requestedBy)
    for (const a of b.authorizations) if (a.meaning === 'authorized') authorizers.set(a.userId, a.name)
  }
  return { requesters, authorizers }
}

/** The order of bypasses in force wherever they are listed for attention: overdue first, then by planned end. */
export const byOverdueThenPlannedEnd = (
  a: { overdue: boolean; plannedEnd: string },
  b: { overdue: boolean; plannedEnd: string },
) => Number(b.overdue) - Number(a.overdue) || a.plannedEnd.localeCompare(b.plannedEnd)

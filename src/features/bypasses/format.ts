import { TZDate } from '@date-fns/tz'
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

/** Hours as text: `4 h`, `1.5 h`, `35 min`. */
export function hoursText(h: number | null | undefined): string {
  if (h === null || h === undefined || Number.isNaN(h)) return '—'
  if (h > 0 && h < 1 / 60) return '< 1 min'
  if (h > 0 && h < 1) return `${Math.round(h * 60)} min`
  const r = Math.round(h * 10) / 10
  return `${Number.isInteger(r) ? r : r.toFixed(1)} h`
}

/** A date and time in a site's time zone. */
export function dateTimeIn(iso: string | null | undefined, timeZone: string | undefined): string {
  if (!iso) return '—'
  try {
    return new Intl.DateTimeFormat('en-GB', {
      year: 'numeric',
      month: 'short',
      day: 'numeric',
      hour: '2-digit',
      minute: '2-digit',
      timeZone: timeZone ?? 'UTC',
      timeZoneName: 'short',
    }).format(new Date(iso))
  } catch {
    return iso
  }
}

/** A short date and time in a site's time zone, for dense tables: `1 Jun 2026, 01:15`. */
export function shortDateTimeIn(iso: string | null | undefined, timeZone: string | undefined): string {
  if (!iso) return '—'
  try {
    return new Intl.DateTimeFormat('en-GB', {
      year: 'numeric',
      month: 'short',
      day: 'numeric',
      hour: '2-digit',
      minute: '2-digit',
      timeZone: timeZone ?? 'UTC',
    }).format(new Date(iso))
  } catch {
    return iso
  }
}

/** A calendar date (YYYY-MM-DD) as text. */
export function dateText(d: string | null | undefined): string {
  if (!d) return '—'
  const [y, m, day] = d.slice(0, 10).split('-').map(Number)
  return new Intl.DateTimeFormat('en-GB', { year: 'numeric', month: 'short', day: 'numeric', timeZone: 'UTC' }).format(
    new Date(Date.UTC(y, m - 1, day)),
  )
}

/** `2026-05-04T08:30` (the value of a datetime-local input) for an instant, in the site's time zone. */
export function localInputValue(at: Date, timeZone: string): string {
  const z = new TZDate(at.getTime(), timeZone)
  const p = (n: number) => String(n).padStart(2, '0')
  return `${z.getFullYear()}-${p(z.getMonth() + 1)}-${p(z.getDate())}T${p(z.getHours())}:${p(z.getMinutes())}`
}

/** The instant of a datetime-local value read in the site's time zone; null when incomplete. */
export function fromLocalInput(value: string, timeZone: string): Date | null {
  const m = /^(\d{4})-(\d{2})-(\d{2})T(\d{2}):(\d{2})/.exec(value)
  if (!m) return null
  const z = new TZDate(Number(m[1]), Number(m[2]) - 1, Number(m[3]), Number(m[4]), Number(m[5]), 0, timeZone)
  return Number.isNaN(z.getTime()) ? null : new Date(z.getTime())
}

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

/** A share as a percentage; "—" where there is nothing to share out. */
export const percent = (share: number | null) => (share === null ? '—' : `${Math.round(share * 1000) / 10} %`)

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

import { TZDate } from '@date-fns/tz'

// Dates, times and numbers as every screen shows them. Times are shown in the site's time zone (docs/conventions.md).

const formats = new Map<string, Intl.DateTimeFormat>()

/**
 * The Intl formatter of a locale and options, built once and kept: a table of dates would otherwise build one per cell,
 * and building one costs far more than formatting with it.
 */
function dateFormat(locale: string, options: Intl.DateTimeFormatOptions): Intl.DateTimeFormat {
  const key = `${locale} ${JSON.stringify(options)}`
  let format = formats.get(key)
  if (!format) {
    format = new Intl.DateTimeFormat(locale, options)
    formats.set(key, format)
  }
  return format
}

/** An instant in a time zone with the given parts (hours always 00–23); '—' when there is none. */
export function formatInZone(
  iso: string | null | undefined,
  timeZone: string | undefined,
  parts: Intl.DateTimeFormatOptions,
): string {
  if (!iso) return '—'
  try {
    return dateFormat('en-GB', { ...parts, hourCycle: 'h23', timeZone: timeZone ?? 'UTC' }).format(new Date(iso))
  } catch {
    return iso
  }
}

const DAY_AND_TIME = { year: 'numeric', month: 'short', day: 'numeric', hour: '2-digit', minute: '2-digit' } as const

/** A date and time in a site's time zone, with the zone's short name: `4 May 2026, 08:30 CEST`. */
export const dateTimeIn = (iso: string | null | undefined, timeZone: string | undefined) =>
  // dateStyle/timeStyle cannot be combined with timeZoneName, so the parts are named one by one
  formatInZone(iso, timeZone, { ...DAY_AND_TIME, timeZoneName: 'short' })

/** A short date and time in a site's time zone, for dense tables: `1 Jun 2026, 01:15`. */
export const shortDateTimeIn = (iso: string | null | undefined, timeZone: string | undefined) =>
  formatInZone(iso, timeZone, DAY_AND_TIME)

/** A calendar date 'YYYY-MM-DD' (a due date, already a site date) as '28 Feb 2026'. */
export function dateText(d: string | null | undefined): string {
  if (!d) return '—'
  const [y, m, day] = d.slice(0, 10).split('-').map(Number)
  return dateFormat('en-GB', { year: 'numeric', month: 'short', day: 'numeric', timeZone: 'UTC' }).format(
    new Date(Date.UTC(y, m - 1, day)),
  )
}

/** Today's calendar date in a time zone, 'YYYY-MM-DD'. */
export function todayIn(timeZone: string | undefined, now = new Date()): string {
  return dateFormat('en-CA', { year: 'numeric', month: '2-digit', day: '2-digit', timeZone: timeZone ?? 'UTC' }).format(
    now,
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

/** Hours as text: `4 h`, `1.5 h`, `35 min`. */
export function hoursText(h: number | null | undefined): string {
  if (h === null || h === undefined || Number.isNaN(h)) return '—'
  if (h > 0 && h < 1 / 60) return '< 1 min'
  if (h > 0 && h < 1) return `${Math.round(h * 60)} min`
  const r = Math.round(h * 10) / 10
  return `${Number.isInteger(r) ? r : r.toFixed(1)} h`
}

/** Bytes as B, KB or MB. */
export function sizeText(bytes: number): string {
  if (bytes < 1024) return `${bytes} B`
  if (bytes < 1024 * 1024) return `${Math.round(bytes / 102.4) / 10} KB`
  return `${Math.round(bytes / 104_857.6) / 10} MB`
}

/** The choices of a select, one per entry of a map of labels and in its order: `{ title: label, value: key }`. */
export function choicesOf<K extends string>(labels: Record<K, string>): { title: string; value: K }[] {
  return (Object.entries(labels) as [K, string][]).map(([value, title]) => ({ title, value }))
}

/** A share as a percentage; "—" where there is nothing to share out. */
export const percent = (share: number | null) => (share === null ? '—' : `${Math.round(share * 1000) / 10} %`)

/** A period of whole UTC days (`YYYY-MM-DD`, either empty) as instants: the start of `from` to the end of `to`. */
export function utcDayPeriod(from: string, to: string): { from: string | undefined; to: string | undefined } {
  return {
    from: from ? `${from}T00:00:00Z` : undefined,
    to: to ? new Date(Date.parse(`${to}T00:00:00Z`) + 86_400_000).toISOString() : undefined,
  }
}

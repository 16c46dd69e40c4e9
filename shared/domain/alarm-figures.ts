// Alarm-system performance figures over a journal (docs/domain/alarm-figures.md holds each definition, its target
// and its source). Pure: the journal comes in as columns sorted by time, the period and the policy as arguments.
import { type ChatterRule, chatterEpisodes, DEFAULT_CHATTER_RULE } from './alarm-limit-state.ts'

/** Journal event kinds, in the order of their numeric codes. */
export const ALARM_EVENT_KINDS = [
  'active',
  'return',
  'acknowledged',
  'shelved',
  'unshelved',
  'suppressed',
  'unsuppressed',
  'out_of_service',
  'in_service',
] as const
export type AlarmEventKind = (typeof ALARM_EVENT_KINDS)[number]
export const EVENT_CODE: Record<AlarmEventKind, number> = Object.fromEntries(
  ALARM_EVENT_KINDS.map((k, i) => [k, i]),
) as Record<AlarmEventKind, number>

/** Priorities, lowest first, in the order of their numeric codes (-1: not given). */
export const JOURNAL_PRIORITIES = ['low', 'medium', 'high', 'critical'] as const
export type JournalPriority = (typeof JOURNAL_PRIORITIES)[number]

/** A journal as columns, sorted by time. `t` in seconds; `tag` and `position` index into the name lists. */
export interface JournalColumns {
  t: ArrayLike<number>
  tag: ArrayLike<number>
  kind: ArrayLike<number>
  priority: ArrayLike<number>
  position: ArrayLike<number>
  tags: string[]
  positions: string[]
  /**
   * Alarms already active when the period starts: the tag (index into `tags`) and when it was activated (seconds,
   * before `from`). They are not annunciations of the period, but they are stale and standing like any other.
   */
  activeAtStart?: { tag: number; since: number }[]
}

export interface FigureOptions {
  /** Period start and end, seconds; events outside [from, to) are ignored. */
  from: number
  to: number
  /** Operator positions the figures are averaged over (at least 1; defaults to the positions in the journal). */
  positionCount?: number
  /** More than this many annunciations in one 10-minute period of one position is a flood. */
  floodThreshold: number
  chatter: ChatterRule
  /** An activation that returns within this many seconds is fleeting. */
  fleetingSec: number
  /** An alarm active for longer than this is stale. */
  staleHours: number
}

export const DEFAULT_FIGURE_OPTIONS: Omit<FigureOptions, 'from' | 'to'> = {
  floodThreshold: 10,
  chatter: DEFAULT_CHATTER_RULE,
  fleetingSec: 5,
  staleHours: 24,
}

/** Each target, its value and where it comes from (docs/domain/alarm-figures.md). */
export const ALARM_TARGETS = {
  perHour: { target: 6, max: 12, source: 'ISA-18.2-2016 performance table (from memory)' },
  per10Min: {
    target: 1,
    max: 2,
    source: 'ISA-18.2-2016 (from memory); one per 10 min: HSE Chemicals Sheet No 6 (confirmed)',
  },
  peak10Min: { target: 10, source: 'ISA-18.2-2016 (from memory); ten in ten minutes: HSE Chemicals Sheet No 6' },
  floodShare: { target: 0.01, source: 'ISA-18.2-2016: ~< 1 % of 10-minute periods with > 10 alarms (from memory)' },
  top10Share: { target: 0.05, source: 'ISA-18.2-2016: ~1 % to 5 % at most, with action plans (from memory)' },
  chattering: { target: 0, source: 'ISA-18.2-2016: zero, with action plans (from memory)' },
  fleeting: { target: 0, source: 'ISA-18.2-2016: zero, with action plans (from memory)' },
  stale: { target: 5, source: 'ISA-18.2-2016: fewer than 5 present on any day (from memory)' },
  standing: { target: 10, source: 'EEMUA 191: fewer than 10 standing alarms per operator (from memory)' },
  priority: {
    target: { low: 0.8, medium: 0.15, high: 0.05, critical: 0.01 },
    source: 'ISA-18.2-2016 / EEMUA 191: ~80 / 15 / 5 % low / medium / high, ~< 1 % highest (from memory)',
  },
} as const

export interface TagCount {
  tag: string
  count: number
}

export interface AlarmFigures {
  from: number
  to: number
  positions: number
  annunciated: number
  hours: number
  perPositionPerHour: number
  perPositionPer10Min: number
  /** Start of each 10-minute period and the count of its busiest position. */
  tenMinute: { start: number[]; busiest: number[] }
  peak10Min: number
  floodPeriods: number
  periods: number
  floodShare: number
  longestFlood: { position: string; start: number; end: number; annunciated: number; top: TagCount[] } | null
  badActors: TagCount[]
  badActorShare: number
  chattering: { tag: string; episodes: number }[]
  fleeting: TagCount[]
  fleetingCount: number
  stale: { tag: string; since: number; hours: number }[]
  standing: string[]
  priority: Record<JournalPriority | 'unknown', number>
  states: Record<'shelved' | 'suppressed' | 'out_of_service', { count: number; hours: number }>
}

const A = EVENT_CODE.active
const R = EVENT_CODE.return
const STATE_PAIRS = [
  ['shelved', EVENT_CODE.shelved, EVENT_CODE.unshelved],
  ['suppressed', EVENT_CODE.suppressed, EVENT_CODE.unsuppressed],
  ['out_of_service', EVENT_CODE.out_of_service, EVENT_CODE.in_service],
] as const

function topOf(counts: Map<number, number>, tags: string[], n: number): TagCount[] {
  return [...counts.entries()]
    .sort((a, b) => b[1] - a[1] || (tags[a[0]] < tags[b[0]] ? -1 : 1))
    .slice(0, n)
    .map(([i, count]) => ({ tag: tags[i], count }))
}

/**
 * Computes every figure for the journal in [from, to). Annunciations are `active` events. The flood rule is the
 * simple one: a 10-minute period (aligned to `from`) of one position with more than `floodThreshold`
 * annunciations; consecutive flood periods of one position form one flood.
 */
export function computeAlarmFigures(j: JournalColumns, o: FigureOptions): AlarmFigures {
  const period = 600
  const nPeriods = Math.max(1, Math.ceil((o.to - o.from) / period))
  const nPos = Math.max(1, j.positions.length)
  const positions = Math.max(1, o.positionCount ?? j.positions.length)
  const buckets = new Int32Array(nPos * nPeriods)
  const tagCount = new Map<number, number>()
  const priority = { low: 0, medium: 0, high: 0, critical: 0, unknown: 0 }
  const activationsByTag = new Map<number, number[]>()
  const activeSince = new Map<number, number>()
  const fleeting = new Map<number, number>()
  const stale = new Map<number, { since: number; until: number }>()
  const staleSec = o.staleHours * 3600
  const stateOpen = STATE_PAIRS.map(() => new Map<number, number>())
  const states = {
    shelved: { count: 0, hours: 0 },
    suppressed: { count: 0, hours: 0 },
    out_of_service: { count: 0, hours: 0 },
  }
  for (const a of j.activeAtStart ?? [])
    if (a.since < o.from && !activeSince.has(a.tag)) activeSince.set(a.tag, a.since)
  let annunciated = 0
  const n = j.t.length
  for (let i = 0; i < n; i++) {
    const t = j.t[i]
    if (t < o.from || t >= o.to) continue
    const kind = j.kind[i]
    const tag = j.tag[i]
    if (kind === A) {
      annunciated++
      const b = Math.floor((t - o.from) / period)
      buckets[(j.position[i] >= 0 ? j.position[i] : 0) * nPeriods + b]++
      tagCount.set(tag, (tagCount.get(tag) ?? 0) + 1)
      const p = j.priority[i]
      if (p >= 0 && p < JOURNAL_PRIORITIES.length) priority[JOURNAL_PRIORITIES[p]]++
      else priority.unknown++
      let list = activationsByTag.get(tag)
      if (!list) activationsByTag.set(tag, (list = []))
      list.push(t)
      if (!activeSince.has(tag)) activeSince.set(tag, t)
    } else if (kind === R) {
      const since = activeSince.get(tag)
      if (since !== undefined) {
        const d = t - since
        if (d < o.fleetingSec) fleeting.set(tag, (fleeting.get(tag) ?? 0) + 1)
        if (d > staleSec && !stale.has(tag)) stale.set(tag, { since, until: t })
        activeSince.delete(tag)
      }
    } else {
      for (let s = 0; s < STATE_PAIRS.length; s++) {
        const [name, on, off] = STATE_PAIRS[s]
        if (kind === on) {
          states[name].count++
          if (!stateOpen[s].has(tag)) stateOpen[s].set(tag, t)
        } else if (kind === off) {
          const since = stateOpen[s].get(tag)
          if (since !== undefined) states[name].hours += (t - since) / 3600
          stateOpen[s].delete(tag)
        }
      }
    }
  }
  for (let s = 0; s < STATE_PAIRS.length; s++)
    for (const since of stateOpen[s].values()) states[STATE_PAIRS[s][0]].hours += (o.to - since) / 3600
  for (const [tag, since] of activeSince)
    if (o.to - since > staleSec && !stale.has(tag)) stale.set(tag, { since, until: o.to })

  // 10-minute periods: busiest position, floods per position
  const busiest = new Array<number>(nPeriods).fill(0)
  const starts = Array.from({ length: nPeriods }, (_, b) => o.from + b * period)
  let peak = 0
  let floodPeriods = 0
  let longest: { pos: number; first: number; last: number } | null = null
  for (let p = 0; p < nPos; p++) {
    let runStart = -1
    for (let b = 0; b <= nPeriods; b++) {
      const c = b < nPeriods ? buckets[p * nPeriods + b] : 0
      if (b < nPeriods) {
        if (c > busiest[b]) busiest[b] = c
        if (c > peak) peak = c
      }
      if (b < nPeriods && c > o.floodThreshold) {
        floodPeriods++
        if (runStart < 0) runStart = b
      } else if (runStart >= 0) {
        if (!longest || b - runStart > longest.last - longest.first + 1)
          longest = { pos: p, first: runStart, last: b - 1 }
        runStart = -1
      }
    }
  }
  let longestFlood: AlarmFigures['longestFlood'] = null
  if (longest) {
    const start = o.from + longest.first * period
    const end = Math.min(o.to, o.from + (longest.last + 1) * period)
    const counts = new Map<number, number>()
    let total = 0
    for (let i = 0; i < n; i++) {
      const t = j.t[i]
      if (j.kind[i] !== A || t < start || t >= end || (j.position[i] >= 0 ? j.position[i] : 0) !== longest.pos) continue
      total++
      counts.set(j.tag[i], (counts.get(j.tag[i]) ?? 0) + 1)
    }
    longestFlood = {
      position: j.positions[longest.pos] ?? '',
      start,
      end,
      annunciated: total,
      top: topOf(counts, j.tags, 5),
    }
  }

  const badActors = topOf(tagCount, j.tags, 10)
  const chattering: AlarmFigures['chattering'] = []
  for (const [tag, times] of activationsByTag) {
    const episodes = chatterEpisodes(times, o.chatter).length
    if (episodes) chattering.push({ tag: j.tags[tag], episodes })
  }
  chattering.sort((a, b) => b.episodes - a.episodes || (a.tag < b.tag ? -1 : 1))
  const hours = (o.to - o.from) / 3600
  const share = (x: number) => (annunciated ? x / annunciated : 0)
  return {
    from: o.from,
    to: o.to,
    positions,
    annunciated,
    hours,
    perPositionPerHour: hours > 0 ? annunciated / positions / hours : 0,
    perPositionPer10Min: hours > 0 ? annunciated / positions / (hours * 6) : 0,
    tenMinute: { start: starts, busiest },
    peak10Min: peak,
    floodPeriods,
    periods: nPeriods * nPos,
    floodShare: floodPeriods / (nPeriods * nPos),
    longestFlood,
    badActors,
    badActorShare: share(badActors.reduce((s, b) => s + b.count, 0)),
    chattering,
    fleeting: topOf(fleeting, j.tags, 1000),
    fleetingCount: [...fleeting.values()].reduce((s, c) => s + c, 0),
    stale: [...stale.entries()]
      .map(([tag, { since, until }]) => ({ tag: j.tags[tag], since, hours: (until - since) / 3600 }))
      .sort((a, b) => a.since - b.since),
    standing: [...activeSince.keys()].map((i) => j.tags[i]).sort(),
    priority: {
      low: share(priority.low),
      medium: share(priority.medium),
      high: share(priority.high),
      critical: share(priority.critical),
      unknown: share(priority.unknown),
    },
    states,
  }
}

import { describe, expect, it } from 'vitest'
import {
  type AlarmEventKind,
  computeAlarmFigures,
  DEFAULT_FIGURE_OPTIONS,
  EVENT_CODE,
  type JournalColumns,
  JOURNAL_PRIORITIES,
  type JournalPriority,
} from '../../../shared/domain/alarm-figures.ts'

// Small journals whose figures are worked out by hand below. Definitions: ISA-18.2-2016 and its technical report
// TR18.2.5 (alarm rates, floods, bad actors, chattering, stale, priority mix), EEMUA 191 (standing alarms), as
// summarised in docs/domain/alarm-figures.md.

type Row = [t: number, tag: string, kind: AlarmEventKind, priority?: JournalPriority, position?: string]
function journal(rows: Row[]): JournalColumns {
  const tags: string[] = []
  const positions: string[] = []
  const idx = (list: string[], x: string) => (list.includes(x) ? list.indexOf(x) : list.push(x) - 1)
  const sorted = [...rows].sort((a, b) => a[0] - b[0])
  return {
    t: sorted.map((r) => r[0]),
    tag: sorted.map((r) => idx(tags, r[1])),
    kind: sorted.map((r) => EVENT_CODE[r[2]]),
    priority: sorted.map((r) => (r[3] ? JOURNAL_PRIORITIES.indexOf(r[3]) : -1)),
    position: sorted.map((r) => idx(positions, r[4] ?? 'C1')),
    tags,
    positions,
  }
}
const H = 3600
const figures = (rows: Row[], from: number, to: number, extra: Partial<typeof DEFAULT_FIGURE_OPTIONS> = {}) =>
  computeAlarmFigures(journal(rows), { ...DEFAULT_FIGURE_OPTIONS, ...extra, from, to })

describe('rates per operator position (ISA-18.2 performance table)', () => {
  it('12 annunciations over 2 h on one position: 6 /h and 1 /10 min', () => {
    const rows: Row[] = Array.from({ length: 12 }, (_, i) => [i * 600, `T${i}`, 'active', 'low'] as Row)
    const f = figures(rows, 0, 2 * H)
    expect(f.annunciated).toBe(12)
    expect(f.perPositionPerHour).toBe(6) // 12 / 1 / 2
    expect(f.perPositionPer10Min).toBe(1) // 12 / 12 periods
  })
  it('two positions halve the per-position rate; returns and acknowledgements are not annunciations', () => {
    const rows: Row[] = [
      [0, 'A', 'active', 'low', 'C1'],
      [10, 'A', 'acknowledged', 'low', 'C1'],
      [20, 'A', 'return', 'low', 'C1'],
      [30, 'B', 'active', 'low', 'C2'],
    ]
    const f = figures(rows, 0, H)
    expect(f.annunciated).toBe(2)
    expect(f.perPositionPerHour).toBe(1) // 2 / 2 positions / 1 h
  })
})

describe('10-minute periods and floods (simple rule: more than 10 in one 10-minute period)', () => {
  // windows of 10 min from 0: counts 3, 12, 25, 8, 6, 4, 2 (the reference's flood-interval example)
  const counts = [3, 12, 25, 8, 6, 4, 2]
  const rows: Row[] = counts.flatMap((c, w) =>
    Array.from({ length: c }, (_, k) => [w * 600 + k * 10, k < 7 ? 'FLOOD-1' : `X${k}`, 'active', 'high'] as Row),
  )
  const f = figures(rows, 0, 70 * 60)
  it('peak, flood periods and share', () => {
    expect(f.tenMinute.busiest).toEqual(counts)
    expect(f.peak10Min).toBe(25)
    expect(f.floodPeriods).toBe(2) // windows 2 and 3 (12 and 25); 8 and 6 are not > 10
    expect(f.floodShare).toBeCloseTo(2 / 7, 12)
  })
  it('the longest flood spans windows 2–3 (20 min, 37 annunciations) with its top contributor', () => {
    expect(f.longestFlood).toMatchObject({ start: 600, end: 1800, annunciated: 37 })
    // FLOOD-1 is the first 7 of each window: 7 + 7 = 14 of 37
    expect(f.longestFlood?.top[0]).toEqual({ tag: 'FLOOD-1', count: 14 })
  })
  it('exactly 10 in a period is not a flood, 11 is', () => {
    const ten: Row[] = Array.from({ length: 10 }, (_, i) => [i, `T${i}`, 'active'] as Row)
    expect(figures(ten, 0, 600).floodPeriods).toBe(0)
    expect(figures([...ten, [11, 'T11', 'active']], 0, 600).floodPeriods).toBe(1)
  })
})

describe('bad actors: the 10 most frequent alarms and their share of all annunciations', () => {
  it('12 tags: A×10, B×5, C..L ×1 each (10 more) = 25; top 10 = 10 + 5 + 8 = 23 → 92 %', () => {
    const rows: Row[] = [
      ...Array.from({ length: 10 }, (_, i) => [i * 100, 'A', 'active'] as Row),
      ...Array.from({ length: 5 }, (_, i) => [i * 100 + 1, 'B', 'active'] as Row),
      ...'CDEFGHIJKL'.split('').map((tag, i) => [2000 + i, tag, 'active'] as Row),
    ]
    const f = figures(rows, 0, H)
    expect(f.annunciated).toBe(25)
    expect(f.badActors).toHaveLength(10)
    expect(f.badActors.slice(0, 2)).toEqual([
      { tag: 'A', count: 10 },
      { tag: 'B', count: 5 },
    ])
    expect(f.badActorShare).toBeCloseTo(23 / 25, 12)
  })
})

describe('chattering, fleeting, stale and standing', () => {
  it('chattering: 3 activations within 60 s is one episode; within 61 s is none', () => {
    const chat: Row[] = [
      [0, 'CH', 'active'],
      [5, 'CH', 'return'],
      [30, 'CH', 'active'],
      [35, 'CH', 'return'],
      [60, 'CH', 'active'],
      [65, 'CH', 'return'],
      [1000, 'SLOW', 'active'],
      [1005, 'SLOW', 'return'],
      [1030, 'SLOW', 'active'],
      [1035, 'SLOW', 'return'],
      [1061, 'SLOW', 'active'],
      [1066, 'SLOW', 'return'],
    ]
    expect(figures(chat, 0, H).chattering).toEqual([{ tag: 'CH', episodes: 1 }])
  })
  it('fleeting: returns in less than 5 s (policy); exactly 5 s is not fleeting', () => {
    const rows: Row[] = [
      [0, 'F', 'active'],
      [4.9, 'F', 'return'],
      [100, 'G', 'active'],
      [105, 'G', 'return'],
    ]
    const f = figures(rows, 0, H)
    expect(f.fleeting).toEqual([{ tag: 'F', count: 1 }])
    expect(f.fleetingCount).toBe(1)
  })
  it('stale: active for more than 24 h; standing: still active at the end', () => {
    const rows: Row[] = [
      [0, 'S', 'active'], // never returns within 48 h: stale 48 h, standing
      [10, 'D', 'active'],
      [10 + 24 * H, 'D', 'return'], // exactly 24 h: not stale
      [20, 'E', 'active'],
      [20 + 25 * H, 'E', 'return'], // 25 h: stale
    ]
    const f = figures(rows, 0, 48 * H)
    expect(f.stale.map((s) => [s.tag, s.hours])).toEqual([
      ['S', 48],
      ['E', 25],
    ])
    expect(f.standing).toEqual(['S'])
  })
  it('an alarm active before the period starts is stale and standing, but no annunciation of the period', () => {
    // the period is [0, 10 h); X was activated 30 h before it and returns at 2 h (active 32 h: stale); Y was activated
    // 1 h before it and never returns (standing at 10 h, active 11 h: not stale); hand-worked from the definitions in
    // docs/domain/alarm-figures.md
    const j = journal([
      [2 * H, 'X', 'return'],
      [3 * H, 'Z', 'active'],
    ])
    j.tags.push('Y')
    const x = j.tags.indexOf('X')
    const y = j.tags.indexOf('Y')
    j.activeAtStart = [
      { tag: x, since: -30 * H },
      { tag: y, since: -1 * H },
    ]
    const f = computeAlarmFigures(j, { ...DEFAULT_FIGURE_OPTIONS, from: 0, to: 10 * H })
    expect(f.annunciated).toBe(1) // Z only
    expect(f.stale.map((s) => [s.tag, s.hours])).toEqual([['X', 32]])
    expect(f.standing).toEqual(['Y', 'Z'])
  })
})

describe('priority mix against ~80/15/5 (ISA-18.2 / EEMUA 191)', () => {
  it('8 low, 1 medium, 1 high → 80 / 10 / 10 %', () => {
    const p: JournalPriority[] = ['low', 'low', 'low', 'low', 'low', 'low', 'low', 'low', 'medium', 'high']
    const f = figures(
      p.map((pr, i) => [i * 60, `T${i}`, 'active', pr] as Row),
      0,
      H,
    )
    expect(f.priority).toEqual({ low: 0.8, medium: 0.1, high: 0.1, critical: 0, unknown: 0 })
  })
})

describe('shelved, suppressed and out-of-service counts and durations', () => {
  it('pairs each state with its end, and counts an open state to the end of the period', () => {
    const rows: Row[] = [
      [0, 'A', 'shelved'],
      [2 * H, 'A', 'unshelved'], // 2 h
      [H, 'B', 'shelved'], // open to 10 h: 9 h
      [0, 'C', 'out_of_service'],
      [5 * H, 'C', 'in_service'], // 5 h
      [3 * H, 'D', 'suppressed'],
      [4 * H, 'D', 'unsuppressed'], // 1 h
    ]
    const f = figures(rows, 0, 10 * H)
    expect(f.states).toEqual({
      shelved: { count: 2, hours: 11 },
      suppressed: { count: 1, hours: 1 },
      out_of_service: { count: 1, hours: 5 },
    })
  })
})

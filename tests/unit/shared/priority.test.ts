import { describe, expect, it } from 'vitest'
import {
  checkPriorityMatrix,
  DEFAULT_PRIORITY_MATRIX,
  derivePriority,
  type PriorityMatrix,
  type Severity,
} from '../../../shared/domain/priority.ts'

// Expected cells: DOMAIN.md §6 site-policy priority matrix (common practice, no standard behind the numbers;
// the severity × time-to-respond principle is ISA-18.2, via ../shared/reference/alarm-management.md).
describe('derivePriority, default matrix', () => {
  it.each<[Severity, number, string | null]>([
    ['severe', 1, 'critical'],
    ['severe', 5, 'critical'],
    ['severe', 15, 'high'],
    ['severe', 45, null],
    ['major', 1, 'critical'],
    ['major', 5, 'high'],
    ['major', 15, 'medium'],
    ['major', 45, null],
    ['moderate', 1, 'high'],
    ['moderate', 5, 'medium'],
    ['moderate', 15, 'low'],
    ['moderate', 45, null],
    ['minor', 1, 'medium'],
    ['minor', 5, 'low'],
    ['minor', 15, 'low'],
    ['minor', 45, null],
  ])('severity %s, %s min → %s', (severity, minutes, priority) => {
    const result = derivePriority(severity, minutes, DEFAULT_PRIORITY_MATRIX)
    expect(result.priority).toBe(priority)
    expect(result.noAlarm).toBe(priority === null)
    expect(result.row).toBe(severity)
  })

  // Column edges: lower bound inclusive, upper exclusive ("3 to < 10"), DOMAIN.md §6
  it.each<[number, number, string]>([
    [0, 0, '< 3 min'],
    [2.999, 0, '< 3 min'],
    [3, 1, '3–10 min'],
    [9.999, 1, '3–10 min'],
    [10, 2, '10–30 min'],
    [29.999, 2, '10–30 min'],
    [30, 3, '≥ 30 min'],
    [600, 3, '≥ 30 min'],
  ])('%s min falls in column %s (%s)', (minutes, column, label) => {
    const result = derivePriority('major', minutes)
    expect(result.column).toBe(column)
    expect(result.columnLabel).toBe(label)
  })

  it('explains the derivation', () => {
    expect(derivePriority('major', 5).explanation).toBe('severity major × respond in 3–10 min → high')
    expect(derivePriority('minor', 30).explanation).toBe(
      'severity minor × respond in ≥ 30 min → no alarm (make it a trip or nothing)',
    )
  })

  it.each([-1, Number.NaN, Number.POSITIVE_INFINITY])('rejects a time to respond of %s', (minutes) => {
    expect(() => derivePriority('major', minutes)).toThrow(RangeError)
  })

  it('rejects an unknown severity', () => {
    expect(() => derivePriority('catastrophic' as Severity, 5)).toThrow(RangeError)
  })
})

describe('site override of the matrix', () => {
  // A site policy with two columns (< 15 min, ≥ 15 min) — a made-up override, to check the matrix is data.
  const custom: PriorityMatrix = {
    responseTimeBoundsMin: [15],
    rows: {
      severe: ['critical', 'high'],
      major: ['high', 'medium'],
      moderate: ['medium', 'low'],
      minor: ['low', 'none'],
    },
  }

  it.each<[Severity, number, string | null, string]>([
    ['severe', 14.9, 'critical', '< 15 min'],
    ['severe', 15, 'high', '≥ 15 min'],
    ['minor', 15, null, '≥ 15 min'],
    ['minor', 1, 'low', '< 15 min'],
  ])('severity %s, %s min → %s (%s)', (severity, minutes, priority, label) => {
    const result = derivePriority(severity, minutes, custom)
    expect(result.priority).toBe(priority)
    expect(result.columnLabel).toBe(label)
  })

  it('survives a JSON round trip', () => {
    const copy = JSON.parse(JSON.stringify(DEFAULT_PRIORITY_MATRIX)) as PriorityMatrix
    expect(checkPriorityMatrix(copy)).toEqual([])
    expect(derivePriority('severe', 12, copy).priority).toBe('high')
  })
})

describe('checkPriorityMatrix', () => {
  const base = (): PriorityMatrix => JSON.parse(JSON.stringify(DEFAULT_PRIORITY_MATRIX)) as PriorityMatrix

  it('accepts the default matrix', () => {
    expect(checkPriorityMatrix(DEFAULT_PRIORITY_MATRIX)).toEqual([])
  })

  it.each<[string, (m: PriorityMatrix) => void, RegExp]>([
    [
      'descending bounds',
      (m) => {
        m.responseTimeBoundsMin = [10, 3, 30]
      },
      /greater than boundary/,
    ],
    [
      'equal bounds',
      (m) => {
        m.responseTimeBoundsMin = [3, 3, 30]
      },
      /greater than boundary/,
    ],
    [
      'zero bound',
      (m) => {
        m.responseTimeBoundsMin = [0, 10, 30]
      },
      /positive/,
    ],
    [
      'no bounds',
      (m) => {
        m.responseTimeBoundsMin = []
      },
      /at least one/,
    ],
    [
      'short row',
      (m) => {
        m.rows.major = ['critical', 'high', 'medium']
      },
      /row major must have 4 cells/,
    ],
    [
      'unknown cell',
      (m) => {
        m.rows.minor[0] = 'urgent' as 'low'
      },
      /row minor cell 0/,
    ],
    [
      'missing row',
      (m) => {
        delete (m.rows as Partial<PriorityMatrix['rows']>).severe
      },
      /row severe is missing/,
    ],
  ])('reports %s', (_name, mutate, message) => {
    const m = base()
    mutate(m)
    expect(checkPriorityMatrix(m).join('\n')).toMatch(message)
    expect(() => derivePriority('moderate', 5, m)).toThrow(RangeError)
  })
})

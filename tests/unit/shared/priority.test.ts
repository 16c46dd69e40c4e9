import { describe, expect, it } from 'vitest'
import {
  checkPriorityMatrix,
  classifyLimit,
  DEFAULT_ALARM_PHILOSOPHY,
  DEFAULT_PRIORITY_MATRIX,
  derivePriority,
  type PriorityMatrix,
  type Severity,
} from '../../../shared/domain/priority.ts'

// Expected cells: the default site-policy priority matrix of docs/domain/alarm-classification.md (common practice,
// no standard behind the numbers; the severity × time-to-respond principle is ISA-18.2 / IEC 62682). The last
// column is an alert: with 30 min or more to respond the condition is not urgent enough for an alarm
// (ISA-18.2-2016 separates alerts from alarms; from memory).
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
    expect(result.alertCell).toBe(priority === null)
    expect(result.row).toBe(severity)
  })

  // Column edges: lower bound inclusive, upper exclusive ("3 to < 10"), docs/conventions.md "Alarm priority matrix"
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
      'severity minor × respond in ≥ 30 min → alert (not urgent enough for an alarm)',
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
      minor: ['low', 'alert'],
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

describe('alarm philosophy: slow conditions as the lowest priority', () => {
  it('gives an alert cell the lowest priority when the site chooses so', () => {
    const d = derivePriority('minor', 45, DEFAULT_PRIORITY_MATRIX, { longResponseAs: 'lowest_priority' })
    expect(d.priority).toBe('low')
    expect(d.alertCell).toBe(true)
    expect(d.explanation).toMatch(/lowest priority/)
  })
})

// Classification rules of docs/domain/alarm-classification.md: the alert cell, the short-response warning
// (about 10 min: common practice in layer-of-protection analysis, a site policy) and trips without priority.
describe('classifyLimit', () => {
  const alarm = (severity: Severity, responseTimeMin: number) => ({
    limitClass: 'alarm' as const,
    severity,
    responseTimeMin,
    sil: null,
  })

  it('refuses an alarm in the alert column and says to register it as an alert', () => {
    const c = classifyLimit(alarm('moderate', 45))
    expect(c.priority).toBeNull()
    expect(c.errors).toHaveLength(1)
    expect(c.errors[0]).toMatchObject({ code: 'ALARM_NOT_URGENT', field: 'limitClass' })
    expect(c.errors[0].message).toMatch(/register it as an alert/)
    expect(c.errors[0].message).not.toMatch(/trip/)
  })

  it('accepts the same condition as an alert, without priority', () => {
    const c = classifyLimit({ ...alarm('moderate', 45), limitClass: 'alert' })
    expect(c).toMatchObject({ priority: null, errors: [], warnings: [] })
  })

  it('accepts the same alarm with the lowest priority when the philosophy says so', () => {
    const c = classifyLimit(alarm('moderate', 45), DEFAULT_PRIORITY_MATRIX, {
      ...DEFAULT_ALARM_PHILOSOPHY,
      longResponseAs: 'lowest_priority',
    })
    expect(c.priority).toBe('low')
    expect(c.errors).toEqual([])
  })

  it.each<[Severity, number, boolean]>([
    ['major', 9.99, true],
    ['severe', 2, true],
    ['major', 10, false], // the policy bound itself is not "less than"
    ['moderate', 2, false], // only major and severe consequences
    ['minor', 1, false],
  ])('%s consequence, %s min to respond → warning %s', (severity, minutes, warned) => {
    const c = classifyLimit(alarm(severity, minutes))
    expect(c.errors).toEqual([])
    expect(c.warnings.some((w) => w.code === 'OPERATOR_TOO_SLOW')).toBe(warned)
  })

  it('follows the site bound for the short end', () => {
    const c = classifyLimit(alarm('major', 12), DEFAULT_PRIORITY_MATRIX, {
      ...DEFAULT_ALARM_PHILOSOPHY,
      shortResponseMin: 15,
    })
    expect(c.warnings.map((w) => w.code)).toEqual(['OPERATOR_TOO_SLOW'])
  })

  it('gives a trip no priority and no findings', () => {
    const c = classifyLimit({ limitClass: 'trip', severity: 'severe', responseTimeMin: 45, sil: 2 })
    expect(c).toMatchObject({ priority: null, errors: [], warnings: [] })
  })
})

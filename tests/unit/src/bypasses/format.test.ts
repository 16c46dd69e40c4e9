import { describe, expect, it } from 'vitest'
import { byOverdueThenPlannedEnd } from '@/features/bypasses/format'

// The order of bypasses in force on Home and on the shift handover (docs/shift-handover.md, "Bypassed"): the overdue ones first, then
// the one due to end soonest. Common practice: what has outlived its plan comes before what is still within it.

describe('byOverdueThenPlannedEnd', () => {
  it('puts the overdue bypasses first, each group by planned end', () => {
    const rows = [
      { id: 1, overdue: false, plannedEnd: '2026-07-06T18:00:00.000Z' },
      { id: 2, overdue: true, plannedEnd: '2026-07-06T10:00:00.000Z' },
      { id: 3, overdue: false, plannedEnd: '2026-07-06T14:00:00.000Z' },
      { id: 4, overdue: true, plannedEnd: '2026-07-06T08:00:00.000Z' },
    ]
    expect([...rows].sort(byOverdueThenPlannedEnd).map((r) => r.id)).toEqual([4, 2, 3, 1])
  })
})

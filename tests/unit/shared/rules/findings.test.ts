import { describe, expect, it } from 'vitest'
import {
  type FindingAction,
  type FindingActor,
  type FindingRecord,
  findingVerdicts,
  onAbsent,
  onSeenAgain,
} from '../../../../shared/domain/rules/findings.ts'
import type { FindingState } from '../../../../shared/schemas/reconciliation.ts'

const record = (state: FindingState, over: Partial<FindingRecord> = {}): FindingRecord => ({
  state,
  kind: 'changed_without_moc',
  present: true,
  deviceValue: '790',
  changeRequestId: null,
  ...over,
})
const engineer: FindingActor = { isSafetyEngineer: true, mayAccept: true }
const manager: FindingActor = { isSafetyEngineer: false, mayAccept: true }
const operator: FindingActor = { isSafetyEngineer: false, mayAccept: false }

// state × role → expected answer of each action (true = allowed, else the HTTP status of the refusal)
const table: [FindingState, string, FindingActor, Record<FindingAction, true | 403 | 409>][] = [
  ['open', 'engineer', engineer, { acknowledge: true, linkChange: 409, accept: 409 }],
  ['open', 'manager', manager, { acknowledge: 403, linkChange: 403, accept: 409 }],
  ['open', 'operator', operator, { acknowledge: 403, linkChange: 403, accept: 403 }],
  ['acknowledged', 'engineer', engineer, { acknowledge: 409, linkChange: true, accept: true }],
  ['acknowledged', 'manager', manager, { acknowledge: 403, linkChange: 403, accept: true }],
  ['acknowledged', 'operator', operator, { acknowledge: 403, linkChange: 403, accept: 403 }],
  ['resolved', 'engineer', engineer, { acknowledge: 409, linkChange: 409, accept: 409 }],
  ['resolved', 'manager', manager, { acknowledge: 403, linkChange: 403, accept: 409 }],
  ['accepted', 'engineer', engineer, { acknowledge: 409, linkChange: 409, accept: 409 }],
  ['accepted', 'operator', operator, { acknowledge: 403, linkChange: 403, accept: 403 }],
]

describe('findings rule book: state × role', () => {
  it.each(table)('%s finding, %s', (state, _who, actor, expected) => {
    const v = findingVerdicts(record(state), actor)
    for (const action of Object.keys(expected) as FindingAction[]) {
      const want = expected[action]
      const got = v[action]
      if (want === true) expect(got, action).toEqual({ allowed: true })
      else {
        expect(got.allowed, action).toBe(false)
        if (!got.allowed) {
          expect(got.status, action).toBe(want)
          expect(got.reason.length).toBeGreaterThan(10)
        }
      }
    }
  })
  it('an unreachable source is never resolved by a change request', () => {
    const v = findingVerdicts(record('acknowledged', { kind: 'unreachable' }), engineer)
    expect(v.linkChange.allowed).toBe(false)
    expect(v.accept.allowed).toBe(true)
  })
})

describe('findings rule book: what a run does', () => {
  const seen: [string, FindingRecord, string, ReturnType<typeof onSeenAgain>][] = [
    ['open stays open', record('open'), '790', 'still_open'],
    ['acknowledged stays acknowledged', record('acknowledged'), '795', 'still_open'],
    ['resolved reopens', record('resolved', { present: false }), '790', 'reopen'],
    ['accepted, same value, never absent: stays accepted', record('accepted'), '790', 'still_accepted'],
    ['accepted, another value: reopens', record('accepted'), '800', 'reopen'],
    ['accepted, absent in between: reopens', record('accepted', { present: false }), '790', 'reopen'],
  ]
  it.each(seen)('seen again: %s', (_n, f, value, expected) => expect(onSeenAgain(f, value)).toBe(expected))

  const absent: [string, FindingRecord, number | null, ReturnType<typeof onAbsent>][] = [
    ['open, no change linked → corrected on the device', record('open'), null, 'resolve_by_device_correction'],
    [
      'acknowledged with a linked change',
      record('acknowledged', { changeRequestId: 4 }),
      null,
      'resolve_by_change_request',
    ],
    ['open, explained by an approved change', record('open'), 7, 'resolve_by_change_request'],
    ['resolved stays', record('resolved'), null, 'stays'],
    ['accepted stays', record('accepted'), null, 'stays'],
  ]
  it.each(absent)('absent: %s', (_n, f, cr, expected) => expect(onAbsent(f, cr)).toBe(expected))
})

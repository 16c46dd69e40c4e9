import type { Express } from 'express'
import { beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { createHash } from 'node:crypto'
import canonicalize from 'canonicalize'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { seedDemoShiftHandover } from '../../server/seed/demo-shift-handover.ts'
import { crewOf } from './helpers/agent.ts'
import { draftChange, actionEvents, buildHeaterTrip, ACTIVATE, countRows, mvSourceTest } from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'
import { activateLimit } from './helpers/workflows.ts'

const ctx = useTestDb()
const PW = DEMO_PASSWORD
const HOUR = 3_600_000
const PEOPLE = [
  'engineer',
  'approver',
  'approver2',
  'technician',
  'supervisor',
  'supervisor2',
  'operator',
  'manager',
  'auditor',
  'admin',
] as const
type Who = (typeof PEOPLE)[number]

let app: Express
const { as, signInAll } = crewOf(() => app, PEOPLE)

interface AreaState {
  area: { id: number; name: string }
  bypasses: { id: number; limitId: number; status: string; overdue: boolean }[]
  degraded: {
    limitId: number
    tag: string
    reasons: string[]
    compensatingMeasures: string[] | null
    measuresSignedBy: string | null
  }[]
  overdueTests: { limitId: number; testStatus: string; dueDate: string | null }[]
  temporaryChanges: { id: number; title: string; status: string; expiresAt: string }[]
  alarmStates?: AlarmState[]
}
interface AlarmState {
  id: number
  tag: string
  kind: string
  until: string
  overdue: boolean
  signed: boolean
}
interface Handover {
  id: number
  status: string
  areaIds: number[]
  notes: string
  snapshot: { site: { id: number }; areas: AreaState[] }
  stateHash: string
  contentHash: string
  handedOverBy: { name: string }
  acceptedBy: { name: string } | null
  signatures: { name: string; meaning: string; contentHash: string }[]
  stateUnchanged: boolean
}
interface State {
  site: { id: number; name: string; timeZone: string }
  areas: AreaState[]
  alarmStatesWithoutArea?: AlarmState[]
  asOf: string
  stateHash: string
  pending: Handover[]
  recent: Handover[]
  actions: { handOver: { allowed: boolean; reason?: string } }
}

/** SHA-256 over the RFC 8785 canonical JSON (the signature hash of docs/shift-handover.md), computed here on its own. */
const sha256Canonical = (v: unknown) =>
  createHash('sha256')
    .update(canonicalize(v) ?? 'null', 'utf8')
    .digest('hex')

let areaId = 0
let bypassed: { id: number; tag: string }
let degraded: { id: number; tag: string }
let overdue: { id: number; tag: string }
let bypassId = 0
let changeId = 0

async function handoverWrites() {
  const n = async (t: 'shift_handover' | 'signature') => countRows(ctx.db, t)
  return { handovers: await n('shift_handover'), signatures: await n('signature'), audit: await actionEvents(ctx.db) }
}

beforeAll(async () => {
  ctx.clock.set('2026-09-07T05:00:00Z')
  app = createApp(ctx)
  // the other shift's supervisor, as the demo plant's own seed makes them: a handover needs an outgoing and an incoming one
  await seedDemoShiftHandover(ctx.db, ctx.clock)
  await signInAll()
  const crew = { eng: as.engineer, approver: as.approver, tech: as.technician }
  // four heater trips in the first area of FHR (buildHeaterTrip): one bypassed, one degraded, one under a temporary change, one overdue for test
  const a = await buildHeaterTrip(as.engineer)
  const b = await buildHeaterTrip(as.engineer)
  const c = await buildHeaterTrip(as.engineer)
  const d = await buildHeaterTrip(as.engineer)
  for (const x of [a, b, c, d]) await activateLimit(crew, x.limit)
  overdue = d.limit
  areaId = a.area.id
  bypassed = a.limit
  degraded = b.limit

  const req = await as.operator.created('/api/bypasses', {
    limitId: a.limit.id,
    reason: 'Burner tile repair',
    plannedStart: '2026-09-07T05:00:00Z',
    plannedEnd: '2026-09-07T11:00:00Z',
    predefinedMeasuresConfirmed: true,
  })
  await as.supervisor.post(`/api/bypasses/${req.id}/authorizations`, { password: PW }).expect(200)
  await as.operator.post(`/api/bypasses/${req.id}/activation`, ACTIVATE).expect(200)
  bypassId = req.id

  // a failed test: it did not trip at all (docs/trip-tests.md: as-found no_trip degrades the limit)
  const test = await as.technician.created(
    '/api/trip-tests',
    mvSourceTest(b.limit.id, {
      performedAt: '2026-09-07T04:30:00Z',
      finalElementOk: false,
      latchHeld: false,
      noTrip: true,
    }),
  )
  expect(test.asFoundResult).toBe('no_trip')
  await as.technician.post(`/api/trip-tests/${test.id}/signatures`, { meaning: 'performed', password: PW }).expect(200)
  await as.supervisor
    .post(`/api/limits/${b.limit.id}/degradation`, {
      compensatingMeasures: ['Hourly local reading of TI'],
      repairDeadline: '2026-09-09',
      password: PW,
    })
    .expect(200)

  // its last passing full test was on 1 Jun 2025: due 1 Jun 2026, grace 30 days (the site policy's default, common practice) → overdue since 2 Jul 2026
  const old = await as.technician.created(
    '/api/trip-tests',
    mvSourceTest(d.limit.id, {
      calibratorDueDate: '2025-12-31',
      performedAt: '2025-06-01T08:00:00Z',
      finalElementOk: true,
      latchHeld: true,
      asFound: 781,
    }),
  )
  expect(old.passed).toBe(true)
  await as.technician.post(`/api/trip-tests/${old.id}/signatures`, { meaning: 'performed', password: PW }).expect(200)

  const cr = await draftChange(as.engineer, {
    siteId: c.limit.siteId,
    type: 'temporary',
    title: 'Raise the trip during the dry-out',
    expiresAt: new Date(Date.parse('2026-09-07T05:00:00Z') + 72 * HOUR).toISOString(),
    items: [{ kind: 'modify', limitId: c.limit.id, changes: { setpoint: 800 } }],
  })
  await as.engineer.post(`/api/change-requests/${cr.id}/submission`).expect(200)
  expect(
    (await as.approver.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }).expect(200)).body.status,
  ).toBe('approved')
  changeId = cr.id
})

const state = async (who: Who, ...areaIds: number[]) =>
  (await as[who].get(`/api/shift-handovers/state?${areaIds.map((a) => `areaId=${a}`).join('&')}`).expect(200))
    .body as State

describe('the state of protection of an area for the shift handover', () => {
  it('lists what is bypassed, degraded, overdue for test or never tested, and the open temporary changes', async () => {
    const s = await state('operator', areaId)
    expect(s.areas).toHaveLength(1)
    const a = s.areas[0]
    expect(a.area).toMatchObject({ id: areaId, name: 'Crude Unit' })
    expect(a.bypasses).toEqual([
      expect.objectContaining({ id: bypassId, limitId: bypassed.id, status: 'active', overdue: false }),
    ])
    expect(a.degraded).toEqual([
      expect.objectContaining({
        limitId: degraded.id,
        tag: degraded.tag,
        compensatingMeasures: ['Hourly local reading of TI'],
        measuresSignedBy: 'Hedda Marlowe',
      }),
    ])
    expect(a.degraded[0].reasons.length).toBeGreaterThan(0)
    // the one overdue for its test first, then the three that never passed one
    expect(a.overdueTests[0]).toMatchObject({ limitId: overdue.id, testStatus: 'overdue', dueDate: '2026-06-01' })
    expect(a.overdueTests.slice(1).map((t) => t.testStatus)).toEqual(['never_tested', 'never_tested', 'never_tested'])
    expect(a.overdueTests.slice(1).map((t) => t.limitId)).toEqual(expect.arrayContaining([bypassed.id, degraded.id]))
    expect(a.temporaryChanges).toEqual([
      expect.objectContaining({ id: changeId, status: 'approved', title: 'Raise the trip during the dry-out' }),
    ])
    expect(s.stateHash).toMatch(/^[0-9a-f]{64}$/)
    expect(s.pending).toEqual([])
    // the operator reads it; only shift supervisors hand over
    expect(s.actions.handOver).toMatchObject({ allowed: false })
    expect((await state('supervisor', areaId)).actions.handOver).toEqual({ allowed: true })

    // another area of the site shows none of it; a missing area is 404, none at all 400
    const other = (
      (await as.operator.get(`/api/areas?siteId=${s.site.id}`).expect(200)).body.items as { id: number }[]
    ).find((x) => x.id !== areaId)!
    const quiet = await state('operator', other.id)
    const q = quiet.areas[0]
    expect([q.bypasses, q.degraded, q.overdueTests, q.temporaryChanges]).toEqual([[], [], [], []])
    await as.operator.get('/api/shift-handovers/state?areaId=999999').expect(404)
    await as.operator.get('/api/shift-handovers/state').expect(400)
  })

  it('the hash covers what is shown, not when it was read: the same state an hour later has the same hash', async () => {
    const first = await state('supervisor', areaId)
    ctx.clock.set('2026-09-07T06:05:00Z')
    await signInAll()
    const later = await state('supervisor', areaId)
    expect(later.asOf).not.toBe(first.asOf)
    expect(later.stateHash).toBe(first.stateHash)
    expect(sha256Canonical({ site: later.site, areas: later.areas })).toBe(later.stateHash)

    // past its planned end the bypass is overdue, still active: that is a change of state, and of the hash
    ctx.clock.set('2026-09-07T11:05:00Z')
    await signInAll()
    const overdueNow = await state('supervisor', areaId)
    expect(overdueNow.areas[0].bypasses).toEqual([
      expect.objectContaining({ id: bypassId, status: 'active', overdue: true }),
    ])
    expect(overdueNow.stateHash).not.toBe(first.stateHash)
  })

  it('carries the alarm states in force: on the area’s limits, and on tags of no area; ending them gives the hash back', async () => {
    const before = await state('supervisor', areaId)
    expect(before.areas[0]).not.toHaveProperty('alarmStates')
    // a trip's alarm taken out of service under the shift supervisor's signature, and a tag the register does not hold
    // shelved by the operator (docs/alarms.md#alarm-states)
    const oos = await as.supervisor.created('/api/alarm-states', {
      siteId: before.site.id,
      tag: overdue.tag,
      kind: 'out_of_service',
      reason: 'Transmitter sent for repair',
      hours: 8,
      password: PW,
    })
    const shelf = await as.operator.created('/api/alarm-states', {
      siteId: before.site.id,
      tag: 'XA-9001',
      kind: 'shelved',
      reason: 'Nuisance alarm during start-up',
      hours: 2,
    })
    const s = await state('supervisor', areaId)
    // the test clock stands at 11:05 UTC (and runs on from there): eight hours on is 19:05 UTC
    expect(s.areas[0].alarmStates).toEqual([
      expect.objectContaining({
        id: oos.id,
        tag: overdue.tag,
        kind: 'out_of_service',
        until: expect.stringMatching(/^2026-09-07T19:05:/),
        overdue: false,
        signed: true,
      }),
    ])
    expect(s.alarmStatesWithoutArea).toEqual([
      expect.objectContaining({ id: shelf.id, tag: 'XA-9001', kind: 'shelved', overdue: false, signed: false }),
    ])
    expect(s.stateHash).not.toBe(before.stateHash)
    const { site, areas, alarmStatesWithoutArea } = s
    expect(sha256Canonical({ site, areas, alarmStatesWithoutArea })).toBe(s.stateHash)

    await as.technician.post(`/api/alarm-states/${oos.id}/end`, { note: 'Loop checked at setpoint' }).expect(200)
    await as.operator.post(`/api/alarm-states/${shelf.id}/end`, { note: 'Start-up over' }).expect(200)
    const after = await state('supervisor', areaId)
    expect(after.areas[0]).not.toHaveProperty('alarmStates')
    expect(after).not.toHaveProperty('alarmStatesWithoutArea')
    expect(after.stateHash).toBe(before.stateHash)
  })
})

describe('the handover: the outgoing shift supervisor hands over, the incoming one accepts', () => {
  let handover: Handover
  let otherAreaId = 0

  it('several areas at once, with notes; refused for everyone but a shift supervisor, nothing written', async () => {
    ctx.clock.set('2026-09-07T13:45:00Z')
    await signInAll()
    const areas = (await as.supervisor.get(`/api/areas?siteId=${(await state('supervisor', areaId)).site.id}`)).body
      .items as { id: number }[]
    otherAreaId = areas.find((x) => x.id !== areaId)!.id
    const shown = await state('supervisor', areaId, otherAreaId)
    expect(shown.areas.map((a) => a.area.id)).toEqual([areaId, otherAreaId].sort((x, y) => x - y))
    const body = {
      areaIds: [otherAreaId, areaId],
      notes: 'Burner tile repair on H-101 continues; TI read hourly on the degraded heater.',
      stateHash: shown.stateHash,
      password: PW,
    }
    for (const who of PEOPLE.filter((p) => p !== 'supervisor' && p !== 'supervisor2')) {
      const before = await handoverWrites()
      const res = await as[who].post('/api/shift-handovers', body)
      expect(res.status, who).toBe(403)
      expect(await handoverWrites(), who).toEqual(before)
    }
    const before = await handoverWrites()
    const wrong = await as.supervisor.post('/api/shift-handovers', { ...body, password: 'wrong-password' }).expect(403)
    expect(wrong.body.error.code).toBe('SIGNATURE_INVALID')
    const afterWrong = await handoverWrites()
    expect(afterWrong).toEqual({ ...before, audit: [...before.audit, 'signature.failed'] })
    // a hash that is not the state now (what was shown is out of date): 409, nothing written
    const stale = await as.supervisor.post('/api/shift-handovers', { ...body, stateHash: '0'.repeat(64) }).expect(409)
    expect(stale.body.error.message).toContain('changed since it was shown')
    expect(await handoverWrites()).toEqual(afterWrong)
    // areas of two sites at once: 400
    const smpArea = (
      (await as.engineer.get('/api/areas').expect(200)).body.items as { id: number; siteId: number }[]
    ).find((x) => x.siteId !== shown.site.id)!
    await as.engineer.get(`/api/shift-handovers/state?areaId=${areaId}&areaId=${smpArea.id}`).expect(400)

    handover = (await as.supervisor.created('/api/shift-handovers', body)) as Handover
    expect(handover).toMatchObject({
      status: 'handed_over',
      areaIds: [areaId, otherAreaId].sort((x, y) => x - y),
      notes: body.notes,
      stateHash: shown.stateHash,
      handedOverBy: { name: 'Hedda Marlowe' },
      acceptedBy: null,
      stateUnchanged: true,
    })
    // what is signed: the areas, the state shown and the notes (so the notes are part of the signed content)
    expect(handover.contentHash).toBe(
      sha256Canonical({
        areaIds: handover.areaIds,
        snapshot: { site: shown.site, areas: shown.areas },
        notes: body.notes,
      }),
    )
    expect(handover.signatures).toEqual([
      expect.objectContaining({ name: 'Hedda Marlowe', meaning: 'acknowledged', contentHash: handover.contentHash }),
    ])
    expect(await handoverWrites()).toEqual({
      handovers: afterWrong.handovers + 1,
      signatures: afterWrong.signatures + 1,
      audit: [...afterWrong.audit, 'shift_handover.hand_over'],
    })
    // both areas show it as waiting for the incoming shift supervisor
    expect((await state('operator', otherAreaId)).pending.map((h) => h.id)).toEqual([handover.id])
  })

  it('the incoming shift supervisor accepts with the same hash; not the one who handed over, never twice', async () => {
    const body = { contentHash: handover.contentHash, password: PW }
    for (const who of PEOPLE.filter((p) => p !== 'supervisor' && p !== 'supervisor2')) {
      const res = await as[who].post(`/api/shift-handovers/${handover.id}/acceptance`, body)
      expect(res.status, who).toBe(403)
    }
    const before = await handoverWrites()
    const self = await as.supervisor.post(`/api/shift-handovers/${handover.id}/acceptance`, body).expect(403)
    expect(self.body.error.message).toContain('incoming shift supervisor')
    const other = await as.supervisor2
      .post(`/api/shift-handovers/${handover.id}/acceptance`, { ...body, contentHash: 'a'.repeat(64) })
      .expect(409)
    expect(other.body.error.message).toContain('not what was handed over')
    expect(await handoverWrites()).toEqual(before)

    const accepted = (await as.supervisor2.post(`/api/shift-handovers/${handover.id}/acceptance`, body).expect(200))
      .body as Handover
    expect(accepted).toMatchObject({ status: 'accepted', acceptedBy: { name: 'Joren Ashcombe' } })
    expect(accepted.signatures.map((s) => [s.name, s.meaning, s.contentHash])).toEqual([
      ['Hedda Marlowe', 'acknowledged', handover.contentHash],
      ['Joren Ashcombe', 'accepted', handover.contentHash],
    ])
    expect(await handoverWrites()).toEqual({
      ...before,
      signatures: before.signatures + 1,
      audit: [...before.audit, 'shift_handover.accept'],
    })
    await as.supervisor2.post(`/api/shift-handovers/${handover.id}/acceptance`, body).expect(409)
    // the signed record does not change, even for the database's runtime role
    await expect(
      ctx.db.updateTable('shift_handover').set({ notes: 'rewritten' }).where('id', '=', handover.id).execute(),
    ).rejects.toThrow(/does not change/)
  })

  it('a state that changed after the handover cannot be accepted; handing over again replaces the waiting one', async () => {
    const shown = await state('supervisor2', areaId)
    const first = (await as.supervisor2.created('/api/shift-handovers', {
      areaIds: [areaId],
      notes: '',
      stateHash: shown.stateHash,
      password: PW,
    })) as Handover
    // the bypass is removed after the handover: the incoming shift supervisor must not sign the old state
    await as.operator
      .post(`/api/bypasses/${bypassId}/removal`, { pvClearConfirmed: true, protectionRestoredConfirmed: true })
      .expect(200)
    const changed = await as.supervisor
      .post(`/api/shift-handovers/${first.id}/acceptance`, { contentHash: first.contentHash, password: PW })
      .expect(409)
    expect(changed.body.error.message).toContain('changed since it was handed over')
    expect((await as.supervisor.get(`/api/shift-handovers/${first.id}`).expect(200)).body.stateUnchanged).toBe(false)

    const again = await state('supervisor2', areaId)
    expect(again.areas[0].bypasses).toEqual([])
    const second = (await as.supervisor2.created('/api/shift-handovers', {
      areaIds: [areaId],
      notes: 'Bypass removed at 13:50',
      stateHash: again.stateHash,
      password: PW,
    })) as Handover
    expect((await as.supervisor.get(`/api/shift-handovers/${first.id}`).expect(200)).body.status).toBe('superseded')
    await as.supervisor
      .post(`/api/shift-handovers/${first.id}/acceptance`, { contentHash: first.contentHash, password: PW })
      .expect(409)
    expect(
      (
        await as.supervisor
          .post(`/api/shift-handovers/${second.id}/acceptance`, { contentHash: second.contentHash, password: PW })
          .expect(200)
      ).body.status,
    ).toBe('accepted')
    const s = await state('operator', areaId)
    expect(s.pending).toEqual([])
    expect(s.recent.map((h) => [h.id, h.status])).toEqual([
      [second.id, 'accepted'],
      [first.id, 'superseded'],
      [handover.id, 'accepted'],
    ])
  })
})

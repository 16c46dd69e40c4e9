import type { Express } from 'express'
import { beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { contentHash } from '../../server/features/signatures/signatures.ts'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { type ApiAgent, signedIn } from './helpers/agent.ts'
import { buildHeaterTrip } from './helpers/factories.ts'
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
  'operator',
  'manager',
  'auditor',
  'admin',
] as const
type Who = (typeof PEOPLE)[number]

let app: Express
const as = {} as Record<Who, ApiAgent>

interface State {
  area: { id: number; name: string; siteId: number }
  at: string
  contentHash: string
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
  acknowledgements: { id: number; at: string; by: string; contentHash: string }[]
}

let areaId = 0
let bypassed: { id: number; tag: string }
let degraded: { id: number; tag: string }
let overdue: { id: number; tag: string }
let bypassId = 0
let changeId = 0

async function handoverWrites() {
  const n = async (t: 'handover_ack' | 'signature') =>
    Number(
      (
        await ctx.db
          .selectFrom(t)
          .select((eb) => eb.fn.countAll<number>().as('n'))
          .executeTakeFirstOrThrow()
      ).n,
    )
  const audit = await ctx.db
    .selectFrom('audit_event')
    .select('action')
    .where('action', 'not like', 'session.%')
    .orderBy('id')
    .execute()
  return { acks: await n('handover_ack'), signatures: await n('signature'), audit: audit.map((a) => a.action) }
}

beforeAll(async () => {
  ctx.clock.set('2026-09-07T05:00:00Z')
  app = createApp(ctx)
  for (const who of PEOPLE) as[who] = await signedIn(app, who)
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

  const req = (
    await as.operator
      .post('/api/bypasses', {
        limitId: a.limit.id,
        reason: 'Burner tile repair',
        plannedStart: '2026-09-07T05:00:00Z',
        plannedEnd: '2026-09-07T11:00:00Z',
        predefinedMeasuresConfirmed: true,
      })
      .expect(201)
  ).body
  await as.supervisor.post(`/api/bypasses/${req.id}/authorizations`, { password: PW }).expect(200)
  await as.operator.post(`/api/bypasses/${req.id}/activation`).expect(200)
  bypassId = req.id

  // a failed test: it did not trip at all (DOMAIN.md §4: as-found no_trip degrades the limit)
  const test = (
    await as.technician
      .post('/api/trip-tests', {
        limitId: b.limit.id,
        kind: 'full',
        method: 'injection',
        injectionPoint: 'sensor',
        sourceMode: 'mv_source',
        coldJunctionC: 25,
        calibratorId: 'CAL-07',
        calibratorDueDate: '2026-12-31',
        performedAt: '2026-09-07T04:30:00Z',
        finalElementOk: false,
        latchHeld: false,
        noTrip: true,
      })
      .expect(201)
  ).body
  expect(test.asFoundResult).toBe('no_trip')
  await as.technician.post(`/api/trip-tests/${test.id}/signatures`, { meaning: 'performed', password: PW }).expect(200)
  await as.supervisor
    .post(`/api/limits/${b.limit.id}/degradation`, {
      compensatingMeasures: ['Hourly local reading of TI'],
      repairDeadline: '2026-09-09',
      password: PW,
    })
    .expect(200)

  // its last passing full test was on 1 Jun 2025: due 1 Jun 2026, grace 30 days (DOMAIN.md §6 default, common practice) → overdue since 2 Jul 2026
  const old = (
    await as.technician
      .post('/api/trip-tests', {
        limitId: d.limit.id,
        kind: 'full',
        method: 'injection',
        injectionPoint: 'sensor',
        sourceMode: 'mv_source',
        coldJunctionC: 25,
        calibratorId: 'CAL-07',
        calibratorDueDate: '2025-12-31',
        performedAt: '2025-06-01T08:00:00Z',
        finalElementOk: true,
        latchHeld: true,
        asFound: 781,
      })
      .expect(201)
  ).body
  expect(old.passed).toBe(true)
  await as.technician.post(`/api/trip-tests/${old.id}/signatures`, { meaning: 'performed', password: PW }).expect(200)

  const cr = (
    await as.engineer
      .post('/api/change-requests', {
        siteId: c.limit.siteId,
        type: 'temporary',
        title: 'Raise the trip during the dry-out',
        expiresAt: new Date(Date.parse('2026-09-07T05:00:00Z') + 72 * HOUR).toISOString(),
        items: [{ kind: 'modify', limitId: c.limit.id, changes: { setpoint: 800 } }],
      })
      .expect(201)
  ).body
  await as.engineer.post(`/api/change-requests/${cr.id}/submission`).expect(200)
  expect(
    (await as.approver.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }).expect(200)).body.status,
  ).toBe('approved')
  changeId = cr.id
})

describe('the state of protection of an area for shift handover (issue 6)', () => {
  it('lists what is bypassed, degraded, overdue for test or never tested, and the open temporary changes', async () => {
    const s = (await as.operator.get(`/api/protection-state?areaId=${areaId}`).expect(200)).body as State
    expect(s.area).toMatchObject({ id: areaId, name: 'Crude Unit' })
    expect(s.bypasses).toEqual([
      expect.objectContaining({ id: bypassId, limitId: bypassed.id, status: 'active', overdue: false }),
    ])
    expect(s.degraded).toEqual([
      expect.objectContaining({
        limitId: degraded.id,
        tag: degraded.tag,
        compensatingMeasures: ['Hourly local reading of TI'],
        measuresSignedBy: 'Hedda Marlowe',
      }),
    ])
    expect(s.degraded[0].reasons.length).toBeGreaterThan(0)
    // the one overdue for its test first, then the three that never passed one
    expect(s.overdueTests[0]).toMatchObject({ limitId: overdue.id, testStatus: 'overdue', dueDate: '2026-06-01' })
    expect(s.overdueTests.slice(1).map((t) => t.testStatus)).toEqual(['never_tested', 'never_tested', 'never_tested'])
    expect(s.overdueTests.slice(1).map((t) => t.limitId)).toEqual(expect.arrayContaining([bypassed.id, degraded.id]))
    expect(s.temporaryChanges).toEqual([
      expect.objectContaining({ id: changeId, status: 'approved', title: 'Raise the trip during the dry-out' }),
    ])
    expect(s.contentHash).toMatch(/^[0-9a-f]{64}$/)
    expect(s.acknowledgements).toEqual([])

    // past its planned end the bypass is listed as overdue, still active
    ctx.clock.set('2026-09-07T11:05:00Z')
    await as.operator.refreshCsrf()
    await as.operator.signIn('operator@fernhollow.example')
    const later = (await as.operator.get(`/api/protection-state?areaId=${areaId}`).expect(200)).body as State
    expect(later.bypasses).toEqual([expect.objectContaining({ id: bypassId, status: 'active', overdue: true })])
    // another area of the site shows none of it
    const other = (
      (await as.operator.get(`/api/areas?siteId=${s.area.siteId}`).expect(200)).body.items as { id: number }[]
    ).find((x) => x.id !== areaId)!
    const quiet = (await as.operator.get(`/api/protection-state?areaId=${other.id}`).expect(200)).body as State
    expect([quiet.bypasses, quiet.degraded, quiet.overdueTests, quiet.temporaryChanges]).toEqual([[], [], [], []])
    await as.operator.get('/api/protection-state?areaId=999999').expect(404)
  })

  it('the incoming shift supervisor acknowledges it with a signature (password), recorded and audited; others get 403', async () => {
    ctx.clock.set('2026-09-07T13:45:00Z')
    for (const who of PEOPLE) as[who] = await signedIn(app, who)
    for (const who of PEOPLE.filter((p) => p !== 'supervisor')) {
      const before = await handoverWrites()
      const res = await as[who].post('/api/protection-state/acknowledgements', { areaId, password: PW })
      expect(res.status, who).toBe(403)
      expect(await handoverWrites(), who).toEqual(before)
    }

    const before = await handoverWrites()
    const wrong = await as.supervisor
      .post('/api/protection-state/acknowledgements', { areaId, password: 'wrong-password' })
      .expect(403)
    expect(wrong.body.error.code).toBe('SIGNATURE_INVALID')
    const afterWrong = await handoverWrites()
    expect(afterWrong).toEqual({ ...before, audit: [...before.audit, 'signature.failed'] })

    const acked = (
      await as.supervisor.post('/api/protection-state/acknowledgements', { areaId, password: PW }).expect(201)
    ).body as State
    expect(acked.acknowledgements).toEqual([
      expect.objectContaining({ by: 'Hedda Marlowe', contentHash: expect.stringMatching(/^[0-9a-f]{64}$/) }),
    ])
    const ack = await ctx.db
      .selectFrom('handover_ack')
      .selectAll()
      .where('id', '=', acked.acknowledgements[0].id)
      .executeTakeFirstOrThrow()
    // the signed hash is the hash of the snapshot kept with it (21 CFR 11.70 signature/record linking, as a model)
    expect(contentHash(ack.snapshot)).toBe(ack.content_hash)
    const snapshot = ack.snapshot as Omit<State, 'contentHash' | 'acknowledgements'>
    expect(snapshot.bypasses.map((x) => [x.id, x.overdue])).toEqual([[bypassId, true]])
    expect(snapshot.degraded.map((x) => x.limitId)).toEqual([degraded.id])
    expect(snapshot.temporaryChanges.map((x) => x.id)).toEqual([changeId])
    const sig = await ctx.db
      .selectFrom('signature')
      .innerJoin('app_user', 'app_user.id', 'signature.user_id')
      .select(['signature.meaning', 'signature.content_hash', 'app_user.email'])
      .where('signature.entity_type', '=', 'HandoverAck')
      .where('signature.entity_id', '=', ack.id)
      .execute()
    expect(sig).toEqual([
      { meaning: 'acknowledged', content_hash: ack.content_hash, email: 'supervisor@fernhollow.example' },
    ])
    const events = await ctx.db
      .selectFrom('audit_event')
      .select(['action', 'actor_id', 'after'])
      .where('action', '=', 'handover.acknowledge')
      .where('entity_id', '=', String(areaId))
      .execute()
    expect(events).toEqual([
      expect.objectContaining({
        actor_id: ack.user_id,
        after: expect.objectContaining({ contentHash: ack.content_hash, bypasses: 1, degraded: 1, overdueTests: 4 }),
      }),
    ])
    expect(await handoverWrites()).toEqual({
      acks: afterWrong.acks + 1,
      signatures: afterWrong.signatures + 1,
      audit: [...afterWrong.audit, 'handover.acknowledge'],
    })
  })
})

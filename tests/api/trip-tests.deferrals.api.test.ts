import { describe, expect, it } from 'vitest'
import { createTripTestJob } from '../../server/features/trip-tests/trip-tests.jobs.ts'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { useSignedIn } from './helpers/agent.ts'
import { buildHeaterTrip, rowCounts, simulatorTest } from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'
import { activateLimit } from './helpers/workflows.ts'

// Test deferrals (docs/trip-tests.md#test-deferrals), the repair deadline against the function's MTTR and its
// escalation (docs/trip-tests.md#degraded-limits), with what home, the shift handover and the review show of them. A 2oo3
// function tested channel by channel: trip-tests.channels.api.test.ts.

const ctx = useTestDb()
const PW = DEMO_PASSWORD
const PEOPLE = ['engineer', 'approver', 'approver2', 'technician', 'supervisor', 'operator', 'manager'] as const
const { as: a, at } = useSignedIn(ctx, PEOPLE, { at: '2026-01-10T08:00:00Z' })

async function activeTrip(sil: 1 | 2 | 3 | null) {
  const { limit } = await buildHeaterTrip(a.engineer, { sil })
  await activateLimit({ eng: a.engineer, approver: a.approver, approver2: a.approver2, tech: a.technician }, limit)
  return limit as { id: number; tag: string; siteId: number }
}

async function tested(limitId: number, performedAt: string, result: Record<string, unknown> = { asFound: 781 }) {
  const t = await a.technician.created(
    '/api/trip-tests',
    simulatorTest(limitId, { performedAt, finalElementOk: true, latchHeld: true, ...result }),
  )
  await a.technician.post(`/api/trip-tests/${t.id}/signatures`, { meaning: 'performed', password: PW }).expect(200)
  return t as { id: number; passed: boolean }
}
const limitNow = async (id: number) => (await a.engineer.get(`/api/limits/${id}`).expect(200)).body
/** The shift handover's live state of one area, as the shift supervisor sees it. */
const handoverArea = async (areaId: number) =>
  (await a.supervisor.get(`/api/shift-handovers/state?areaId=${areaId}`).expect(200)).body.areas[0]
/** The plant manager's review figures for the site over a period. */
const reviewKpis = async (siteId: number, from: string, to: string) =>
  (await a.manager.get(`/api/bypass-review?siteId=${siteId}&from=${from}&to=${to}`).expect(200)).body.kpis

describe('test deferrals', () => {
  it('gives a SIL-rated function no automatic grace, and moves its due date only by an approved deferral', async () => {
    const sil = await activeTrip(2)
    await tested(sil.id, '2026-01-10T07:00:00Z')
    expect(await limitNow(sil.id)).toMatchObject({ testDueDate: '2027-01-10', testStatus: 'ok' })

    // the day after the due date a SIL 2 function is overdue at once (no 30-day grace as for non-SIL limits)
    await at('2027-01-11T09:00:00Z')
    await createTripTestJob(ctx.db, ctx.config, ctx.clock).runDue(ctx.clock.now())
    expect((await limitNow(sil.id)).testStatus).toBe('overdue')

    // requests: operators may not; too long (25 % of 12 months = 91 days) is refused; nothing written
    const before = await rowCounts(ctx.db)
    const req = {
      limitId: sil.id,
      newDueDate: '2027-02-20',
      reason: 'Unit runs until the February turnaround',
      compensatingMeasures: ['Second operator round on the heater every 2 h'],
    }
    await a.operator.post('/api/test-deferrals', req).expect(403)
    const tooLong = await a.technician.post('/api/test-deferrals', { ...req, newDueDate: '2027-04-12' }).expect(422)
    expect(tooLong.body.error.message).toContain('at most 91 days')
    await a.technician.post('/api/test-deferrals', { ...req, compensatingMeasures: [] }).expect(400)
    expect(await rowCounts(ctx.db)).toEqual(before)

    const d = await a.technician.created('/api/test-deferrals', req)
    expect(d).toMatchObject({
      status: 'requested',
      originalDueDate: '2027-01-10',
      newDueDate: '2027-02-20',
      extensionDays: 41,
      requiredRole: 'plant_manager',
      inForce: false,
    })
    // the stretched interval: 2026-01-10 to 2027-02-20 = 406 days = 9 744 h (by hand)
    expect(d.risk.stretchedIntervalHours).toBe(9744)
    expect(d.risk.targetSil).toBe(2)
    expect(d.risk.stretchedPfd).toBeGreaterThan(d.risk.designPfd)
    expect(typeof d.risk.meetsTarget).toBe('boolean')
    expect(d.risk.explanation).toContain('SIL 2')
    // one open deferral at a time
    await a.engineer.post('/api/test-deferrals', req).expect(409)
    // a requested deferral moves nothing
    expect((await limitNow(sil.id)).testStatus).toBe('overdue')
    // it shows on the shift handover and waits in the plant manager's review figures
    const areaId = (await limitNow(sil.id)).areaId as number
    expect((await handoverArea(areaId)).deferrals).toEqual([
      {
        id: d.id,
        limitId: sil.id,
        tag: sil.tag,
        status: 'requested',
        originalDueDate: '2027-01-10',
        newDueDate: '2027-02-20',
      },
    ])
    expect(await reviewKpis(sil.siteId, '2027-01-01T00:00:00Z', '2027-01-31T00:00:00Z')).toMatchObject({
      deferralsRequested: 1,
      deferralsApproved: 0,
      deferralsWaiting: 1,
    })

    // the policy names the plant manager for SIL 2: an approver is refused, and so is the requester
    expect(d.actions.approve.allowed).toBe(false)
    await a.approver.post(`/api/test-deferrals/${d.id}/approval`, { password: PW }).expect(403)
    await a.technician.post(`/api/test-deferrals/${d.id}/approval`, { password: PW }).expect(403)
    const managerView = (await a.manager.get(`/api/test-deferrals/${d.id}`).expect(200)).body
    expect(managerView.actions.approve).toEqual({ allowed: true })
    const approved = (
      await a.manager.post(`/api/test-deferrals/${d.id}/approval`, { password: PW, comment: 'Accepted' }).expect(200)
    ).body
    expect(approved).toMatchObject({ status: 'approved', inForce: true, decidedBy: expect.any(String) })
    await a.manager.post(`/api/test-deferrals/${d.id}/rejection`, { password: PW, comment: 'x' }).expect(409)
    // 40 days ahead of 11 January: beyond the 30-day look-ahead of a 12-month interval
    expect(await limitNow(sil.id)).toMatchObject({ testDueDate: '2027-02-20', testStatus: 'ok' })
    const sched = (await a.technician.get('/api/trip-tests/schedule?status=ok').expect(200)).body
    expect(sched.items.find((i: { limitId: number }) => i.limitId === sil.id).deferredTo).toBe('2027-02-20')
    // in force: on the handover as approved; in the review counted as requested and approved in January, none before
    expect((await handoverArea(areaId)).deferrals).toMatchObject([{ id: d.id, status: 'approved' }])
    expect(await reviewKpis(sil.siteId, '2027-01-01T00:00:00Z', '2027-01-31T00:00:00Z')).toMatchObject({
      deferralsRequested: 1,
      deferralsApproved: 1,
      deferralsWaiting: 0,
    })
    expect(await reviewKpis(sil.siteId, '2026-12-01T00:00:00Z', '2027-01-01T00:00:00Z')).toMatchObject({
      deferralsRequested: 0,
      deferralsWaiting: 0,
    })

    // no second deferral while this one is in force
    await a.technician.post('/api/test-deferrals', { ...req, newDueDate: '2027-03-01' }).expect(409)
    // the list
    const list = (await a.engineer.get(`/api/test-deferrals?limitId=${sil.id}`).expect(200)).body
    expect(list.total).toBe(1)
    expect(list.items[0].id).toBe(d.id)

    // the day after the deferred date the function is overdue: no grace runs past a deferral
    await at('2027-02-21T09:00:00Z')
    await createTripTestJob(ctx.db, ctx.config, ctx.clock).runDue(ctx.clock.now())
    expect((await limitNow(sil.id)).testStatus).toBe('overdue')

    // a passing test ends the deferral: the due date counts from it
    await tested(sil.id, '2027-02-21T08:00:00Z')
    expect(await limitNow(sil.id)).toMatchObject({ testDueDate: '2028-02-21', testStatus: 'ok' })
    expect((await a.engineer.get(`/api/test-deferrals/${d.id}`).expect(200)).body.inForce).toBe(false)
    // no longer in force: gone from the handover
    expect((await handoverArea(areaId)).deferrals).toEqual([])
  })

  it('is decided by an approver for a non-SIL limit; a rejection needs a reason and moves nothing', async () => {
    await at('2026-01-10T08:00:00Z')
    const plain = await activeTrip(null)
    await tested(plain.id, '2026-01-10T07:00:00Z')
    const d = await a.engineer.created('/api/test-deferrals', {
      limitId: plain.id,
      newDueDate: '2027-02-01',
      reason: 'Spare calibrator away',
      compensatingMeasures: ['Daily check of the local indicator'],
    })
    expect(d.requiredRole).toBe('approver')
    expect(d.risk.stretchedPfd).toBeNull()
    await a.approver.post(`/api/test-deferrals/${d.id}/rejection`, { password: PW }).expect(400)
    const rejected = (
      await a.approver
        .post(`/api/test-deferrals/${d.id}/rejection`, { password: PW, comment: 'Borrow one from the other unit' })
        .expect(200)
    ).body
    expect(rejected.status).toBe('rejected')
    expect((await limitNow(plain.id)).testDueDate).toBe('2027-01-10')
    // a never-tested limit has nothing to defer
    const fresh = await activeTrip(null)
    await a.engineer
      .post('/api/test-deferrals', {
        limitId: fresh.id,
        newDueDate: '2026-03-01',
        reason: 'x',
        compensatingMeasures: ['y'],
      })
      .expect(409)
  })
})

describe('degraded limits: the repair deadline against the MTTR assumed for the function', () => {
  it('warns beyond the MTTR, needs the plant manager, and escalates a passed deadline once', async () => {
    await at('2026-01-10T08:00:00Z')
    // SIL 1 heater trip: subsystem MTTRs 8, 8 and 24 h → the function's MTTR is 24 h
    const limit = await activeTrip(1)
    await tested(limit.id, '2026-01-10T07:00:00Z', { asFound: 795 })
    const deg = (await a.supervisor.get(`/api/limits/${limit.id}/degradation`).expect(200)).body
    expect(deg.mttrHours).toBe(24)
    expect(deg.items[0].actions.signMeasures).toEqual({ allowed: true })
    const measures = { compensatingMeasures: ['Operator watches TI locally'], password: PW }
    // a technician may not sign the measures
    await a.technician
      .post(`/api/limits/${limit.id}/degradation`, { ...measures, repairDeadline: '2026-01-10' })
      .expect(403)
    // opened 08:00 UTC on 10 January; the deadline is the end of 10 January in Berlin (23:00 UTC): within 24 h
    const within = (
      await a.supervisor
        .post(`/api/limits/${limit.id}/degradation`, { ...measures, repairDeadline: '2026-01-10' })
        .expect(200)
    ).body
    expect(within.items[0]).toMatchObject({ deadlineBeyondMttr: false, repairDeadline: '2026-01-10' })
    expect(within.items[0].actions.approveDeadline.allowed).toBe(false)
    // the end of 11 January is 39 h after opening: beyond the MTTR, the plant manager signs
    const beyond = (
      await a.supervisor
        .post(`/api/limits/${limit.id}/degradation`, { ...measures, repairDeadline: '2026-01-11' })
        .expect(200)
    ).body
    expect(beyond.items[0]).toMatchObject({ deadlineBeyondMttr: true, deadlineApprovedBy: null })
    const mails = await ctx.db
      .selectFrom('mail_outbox')
      .select(['to_addr', 'subject'])
      .where('subject', 'like', 'Approve: repair deadline%')
      .execute()
    expect(mails.map((m) => m.to_addr)).toEqual(['manager@fernhollow.example'])
    await a.supervisor.post(`/api/limits/${limit.id}/degradation/deadline-approval`, { password: PW }).expect(403)
    const approved = (
      await a.manager.post(`/api/limits/${limit.id}/degradation/deadline-approval`, { password: PW }).expect(200)
    ).body
    expect(typeof approved.items[0].deadlineApprovedBy).toBe('string')
    expect(approved.items[0].deadlineApprovedAt).not.toBeNull()
    await a.manager.post(`/api/limits/${limit.id}/degradation/deadline-approval`, { password: PW }).expect(409)

    // 12 January (Berlin): the deadline of the 11th has passed → one escalation mail to managers and supervisors
    const job = createTripTestJob(ctx.db, ctx.config, ctx.clock)
    // on the 11th (Berlin) the deadline day is not over: nothing on home or the handover yet
    const overdueRepairs = async () =>
      (await a.supervisor.get(`/api/trip-tests/overdue-repairs?siteId=${limit.siteId}`).expect(200)).body.items
    const degradedOnHandover = async () =>
      (await handoverArea((await limitNow(limit.id)).areaId)).degraded.find(
        (x: { limitId: number }) => x.limitId === limit.id,
      )
    await at('2026-01-11T22:30:00Z') // 23:30 on the 11th in Berlin
    expect(await overdueRepairs()).toEqual([])
    expect((await degradedOnHandover()).repairDeadlinePassed).toBe(false)
    expect((await job.runDue(new Date('2026-01-11T12:00:00Z'))).escalated).toBe(0)
    expect((await job.runDue(new Date('2026-01-12T09:00:00Z'))).escalated).toBe(1)
    expect((await job.runDue(new Date('2026-01-12T10:00:00Z'))).escalated).toBe(0)
    const escalations = await ctx.db
      .selectFrom('mail_outbox')
      .select(['to_addr'])
      .where('subject', '=', `OVERDUE REPAIR: ${limit.tag} is still degraded`)
      .execute()
    expect(escalations.map((m) => m.to_addr).sort()).toEqual([
      'manager@fernhollow.example',
      'supervisor@fernhollow.example',
    ])
    expect(
      (await a.supervisor.get(`/api/limits/${limit.id}/degradation`).expect(200)).body.items[0].escalatedAt,
    ).not.toBeNull()
    // 00:30 on the 12th in Berlin (23:30 UTC on the 11th): the deadline day is over in the site's zone
    await at('2026-01-11T23:30:00Z')
    expect(await overdueRepairs()).toEqual([
      {
        degradationId: expect.any(Number),
        limitId: limit.id,
        tag: limit.tag,
        siteId: limit.siteId,
        areaId: (await limitNow(limit.id)).areaId,
        repairDeadline: '2026-01-11',
        escalated: true,
      },
    ])
    expect((await degradedOnHandover()).repairDeadlinePassed).toBe(true)
    // a user without a role at the site's other sites asks for another site: nothing of this site
    expect((await a.supervisor.get('/api/trip-tests/overdue-repairs?siteId=999999').expect(200)).body.items).toEqual([])
  })
})

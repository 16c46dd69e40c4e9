import { describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { createBypassJob } from '../../server/features/bypasses/bypasses.jobs.ts'
import { signedInAs } from './helpers/agent.ts'
import { buildHeaterTrip, ACTIVATE } from './helpers/factories.ts'
import { recipients, useFakeSmtp } from './helpers/mail.ts'
import { useTestDb } from './helpers/test-db.ts'
import { activateLimit } from './helpers/workflows.ts'

const ctx = useTestDb()
const PW = 'limitkeeper-demo'
const mailbox = useFakeSmtp(ctx)

describe('bypass: request, authorize, activate, overdue, review', () => {
  it('goes overdue past its planned end, escalates, and shows in the review', async () => {
    // 06:10, so that the jump to the planned start (06:30) stays inside the engineer's 30-minute session idle limit
    // however long the steps in between take on a busy machine (the clock runs on from each time set)
    ctx.clock.set('2026-05-04T06:10:00Z')
    const app = createApp(ctx)
    const { eng, approver, tech, op, sup, mgr } = await signedInAs(app, {
      eng: 'engineer',
      approver: 'approver',
      tech: 'technician',
      op: 'operator',
      sup: 'supervisor',
      mgr: 'manager',
    })
    const { limit } = await buildHeaterTrip(eng)
    // 06:30 to 10:30, the predefined compensating measures confirmed
    const request = {
      limitId: limit.id,
      reason: 'Burner maintenance',
      plannedStart: '2026-05-04T06:30:00Z',
      plannedEnd: '2026-05-04T10:30:00Z',
      predefinedMeasuresConfirmed: true,
    }
    await op.post('/api/bypasses', request).expect(409)
    await activateLimit({ eng, approver, tech }, limit)

    // the confirmation left out
    const noMeasures = await op
      .post('/api/bypasses', { ...request, predefinedMeasuresConfirmed: undefined })
      .expect(400)
    expect(noMeasures.body.error.details.fields.predefinedMeasuresConfirmed).toBeDefined()
    await op.post('/api/bypasses', { ...request, plannedEnd: '2026-05-04T16:30:00Z' }).expect(400)
    const b = await op.created('/api/bypasses', request)
    expect(b.status).toBe('requested')
    await op.post(`/api/bypasses/${b.id}/authorizations`, { password: PW }).expect(403)
    await sup.post(`/api/bypasses/${b.id}/authorizations`, { password: PW }).expect(200)
    // not before its planned start (06:30): 409 with the time in the site's zone (Europe/Berlin, CEST in May)
    const early = await op.post(`/api/bypasses/${b.id}/activation`, ACTIVATE).expect(409)
    expect(early.body.error.message).toContain('08:30 CEST')
    ctx.clock.set('2026-05-04T06:30:00Z')
    // put in force only with both confirmations: the measures in place and the bypass on the operator's screen
    // (docs/bypasses.md#workflow; common practice, IEC 61511-1 asks for an indication to the operator, from memory)
    for (const partial of [{}, { measuresInPlace: true }, { shownToOperator: true }]) {
      const refused = await op.post(`/api/bypasses/${b.id}/activation`, partial).expect(400)
      const fields = Object.keys(refused.body.error.details.fields)
      expect(fields).toEqual(['measuresInPlace', 'shownToOperator'].filter((f) => !(f in partial)))
      expect((await op.get(`/api/bypasses/${b.id}`).expect(200)).body.status).toBe('authorized')
    }
    await op.post(`/api/bypasses/${b.id}/activation`, ACTIVATE).expect(200)
    const putInForce = await ctx.db
      .selectFrom('audit_event')
      .select('after')
      .where('action', '=', 'bypass.activate')
      .where('entity_id', '=', String(b.id))
      .executeTakeFirstOrThrow()
    expect(putInForce.after).toMatchObject({ measuresInPlace: true, shownToOperator: true })
    expect((await eng.get(`/api/limits/${limit.id}`).expect(200)).body.protectionState).toBe('bypassed')
    const second = await op.created('/api/bypasses', {
      ...request,
      reason: 'Second one',
      plannedEnd: '2026-05-04T08:30:00Z',
    })
    await sup.post(`/api/bypasses/${second.id}/authorizations`, { password: PW }).expect(200)
    await op.post(`/api/bypasses/${second.id}/activation`, ACTIVATE).expect(409)

    // past the planned end: overdue, never closed by the clock
    const job = createBypassJob(ctx.db, ctx.config, ctx.clock)
    await job.runDue(ctx.clock.set('2026-05-04T10:31:00Z'))
    const overdue = await mailbox.mailsFor('OVERDUE bypass', ['supervisor@fernhollow.example'])
    expect(overdue.flatMap(recipients)).toContain('supervisor@fernhollow.example')
    await job.runDue(ctx.clock.set('2026-05-04T14:31:00Z'))
    const escalation = await mailbox.mailsFor('Escalation', ['manager@fernhollow.example'])
    expect(escalation.flatMap(recipients)).toContain('manager@fernhollow.example')

    await mgr.refreshCsrf()
    await mgr.signIn('manager@fernhollow.example')
    const review = (await mgr.get('/api/bypass-review').expect(200)).body
    expect(review.kpis.overdueNow).toBe(1)
    expect(review.kpis.activeNow).toBe(1)
    expect(review.items.find((x: { id: number }) => x.id === b.id).overdue).toBe(true)
    expect(review.charts.topLimits[0].tag).toBe(limit.tag)
    await op.refreshCsrf()
    await op.signIn('operator@fernhollow.example')
    await op.get('/api/bypass-review').expect(403)
    await op
      .post(`/api/bypasses/${b.id}/removal`, { pvClearConfirmed: false, protectionRestoredConfirmed: true })
      .expect(400)
    const removed = (
      await op
        .post(`/api/bypasses/${b.id}/removal`, { pvClearConfirmed: true, protectionRestoredConfirmed: true })
        .expect(200)
    ).body
    // the clock keeps running from the time set, so allow the seconds the test itself takes
    expect(removed.overdueHours).toBeGreaterThanOrEqual(4)
    expect(removed.overdueHours).toBeLessThan(4.05)
  })
})

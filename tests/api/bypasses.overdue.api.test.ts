import { describe, expect, it } from 'vitest'
import { createBypassJob } from '../../server/features/bypasses/bypasses.jobs.ts'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { useSignedIn } from './helpers/agent.ts'
import { buildHeaterTrip, ACTIVATE } from './helpers/factories.ts'
import { recipients, useFakeSmtp } from './helpers/mail.ts'
import { useTestDb } from './helpers/test-db.ts'
import { activateLimit } from './helpers/workflows.ts'

const ctx = useTestDb()
const PW = DEMO_PASSWORD
const MIN = 60_000
const HOUR = 60 * MIN
const PEOPLE = ['engineer', 'approver', 'technician', 'supervisor', 'operator', 'manager'] as const

const mailbox = useFakeSmtp(ctx)
const { as, signInAll } = useSignedIn(ctx, PEOPLE, { at: '2026-07-06T05:30:00Z' })
const { deliver, startingWith: mails } = mailbox

describe('bypass past its planned end: warning, overdue, escalation (docs/bypasses.md defaults 1 h / at once / every 4 h, common practice)', () => {
  it('warns the requester 1 h before, tells the shift supervisor at once when overdue, escalates to the plant manager every 4 h, never closes it; an extension clears it', async () => {
    const { limit } = await buildHeaterTrip(as.engineer)
    const patched = (await as.engineer.patch(`/api/limits/${limit.id}`, { maxBypassHours: 100 }).expect(200)).body
    await activateLimit({ eng: as.engineer, approver: as.approver, tech: as.technician }, patched)
    const END = Date.parse('2026-07-06T10:00:00Z')
    const b = await as.operator.created('/api/bypasses', {
      limitId: limit.id,
      reason: 'Burner management rework',
      plannedStart: '2026-07-06T06:00:00Z',
      plannedEnd: new Date(END).toISOString(),
      predefinedMeasuresConfirmed: true,
    })
    await as.supervisor.post(`/api/bypasses/${b.id}/authorizations`, { password: PW }).expect(200)
    ctx.clock.set('2026-07-06T06:00:00Z')
    await signInAll()
    await as.operator.post(`/api/bypasses/${b.id}/activation`, ACTIVATE).expect(200)
    const job = createBypassJob(ctx.db, ctx.config, ctx.clock)
    const run = (t: number) => job.runDue(ctx.clock.set(new Date(t)))
    const warning = `Bypass of ${limit.tag} ends at 10:00 UTC`

    // 61 min before the end: nothing yet; 59 min before: the requester is warned, once
    expect(await run(END - 61 * MIN)).toEqual({ lapsed: 0, warned: 0, overdue: 0, escalated: 0 })
    expect(await run(END - 59 * MIN)).toEqual({ lapsed: 0, warned: 1, overdue: 0, escalated: 0 })
    expect(await run(END - 30 * MIN)).toEqual({ lapsed: 0, warned: 0, overdue: 0, escalated: 0 })
    await deliver()
    expect(mails(warning).map(recipients)).toEqual([['operator@fernhollow.example']])

    // at the end itself it is not overdue yet (overdue: now > plannedEnd)
    expect(await run(END - 1000)).toMatchObject({ overdue: 0 })
    // one minute past the end: overdue, the shift supervisor is told at once
    expect(await run(END + MIN)).toEqual({ lapsed: 0, warned: 0, overdue: 1, escalated: 0 })
    await signInAll()
    const overdue = (await as.operator.get(`/api/bypasses/${b.id}`).expect(200)).body
    expect(overdue).toMatchObject({ status: 'active', overdue: true, removedAt: null })
    // the clock runs on from the time set: allow the seconds the sign-ins take
    expect(overdue.overdueHours).toBeGreaterThanOrEqual(1 / 60)
    expect(overdue.overdueHours).toBeLessThan(0.1)
    expect((await as.engineer.get(`/api/limits/${limit.id}`).expect(200)).body.protectionState).toBe('bypassed')
    expect(
      (await as.manager.get('/api/bypasses?overdue=true').expect(200)).body.items.map((x: { id: number }) => x.id),
    ).toEqual([b.id])
    await deliver()
    const overdueMails = mails(`OVERDUE bypass: ${limit.tag}`)
    expect(overdueMails.map(recipients)).toEqual([['supervisor@fernhollow.example']])
    expect(overdueMails[0].text).toContain(`${ctx.config.appUrl}/bypasses/${b.id}`)

    // every 15 min for the next 8 h 29 min: escalations to the plant manager at 4 h and 8 h overdue, not more, and no repeat of the first mail
    const totals = { lapsed: 0, warned: 0, overdue: 0, escalated: 0 }
    for (let t = END + 15 * MIN; t <= END + 8 * HOUR + 30 * MIN; t += 15 * MIN) {
      const r = await run(t)
      for (const k of Object.keys(totals) as (keyof typeof totals)[]) totals[k] += r[k]
    }
    expect(totals).toEqual({ lapsed: 0, warned: 0, overdue: 0, escalated: 2 })
    await deliver()
    const escalations = mails(`Escalation: bypass of ${limit.tag} overdue`)
    expect(escalations.map(recipients)).toEqual([['manager@fernhollow.example'], ['manager@fernhollow.example']])
    const events = await ctx.db
      .selectFrom('audit_event')
      .select(['action', 'after'])
      .where('entity_type', '=', 'Bypass')
      .where('entity_id', '=', String(b.id))
      .where('action', 'in', ['bypass.overdue', 'bypass.escalate'])
      .orderBy('id')
      .execute()
    expect(events.map((e) => e.action)).toEqual(['bypass.overdue', 'bypass.escalate', 'bypass.escalate'])
    const hours = events.slice(1).map((e) => (e.after as { overdueHours: number }).overdueHours)
    expect(hours[0]).toBeGreaterThanOrEqual(4)
    expect(hours[0]).toBeLessThanOrEqual(4.25)
    expect(hours[1]).toBeGreaterThanOrEqual(8)
    expect(hours[1]).toBeLessThanOrEqual(8.5)

    // never closed by the clock
    await signInAll()
    const still = (await as.manager.get(`/api/bypasses/${b.id}`).expect(200)).body
    expect(still).toMatchObject({ status: 'active', overdue: true, removedAt: null })
    expect(still.overdueHours).toBeGreaterThan(8.4)

    // an extension (a further signed authorization) moves the end past now: no longer overdue, the reminders start afresh
    const extended = (
      await as.manager
        .post(`/api/bypasses/${b.id}/authorizations`, { password: PW, hours: 10, comment: 'Parts arrive at 19:00' })
        .expect(200)
    ).body
    expect(extended).toMatchObject({
      status: 'active',
      overdue: false,
      overdueHours: 0,
      plannedEnd: new Date(END + 10 * HOUR).toISOString(),
    })
    expect(extended.authorizations).toHaveLength(2)
    const row = await ctx.db
      .selectFrom('bypass')
      .select(['expiry_warned_at', 'overdue_notified_at', 'last_escalation_at'])
      .where('id', '=', b.id)
      .executeTakeFirstOrThrow()
    expect(row).toEqual({ expiry_warned_at: null, overdue_notified_at: null, last_escalation_at: null })
    expect((await as.manager.get('/api/bypasses?overdue=true').expect(200)).body.items).toEqual([])
    expect(await run(END + 8 * HOUR + 45 * MIN)).toEqual({ lapsed: 0, warned: 0, overdue: 0, escalated: 0 })
    expect(await run(END + 9 * HOUR + 1 * MIN)).toEqual({ lapsed: 0, warned: 1, overdue: 0, escalated: 0 })

    // removed on record: the job leaves it alone afterwards
    await signInAll()
    await as.operator
      .post(`/api/bypasses/${b.id}/removal`, { pvClearConfirmed: true, protectionRestoredConfirmed: true })
      .expect(200)
    expect(await run(END + 12 * HOUR)).toEqual({ lapsed: 0, warned: 0, overdue: 0, escalated: 0 })
    await deliver()
    expect(mails(`Escalation: bypass of ${limit.tag}`)).toHaveLength(2)
    expect(mails(`OVERDUE bypass: ${limit.tag}`)).toHaveLength(1)
  })
})

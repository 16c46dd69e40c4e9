import { describe, expect, it } from 'vitest'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { useSignedIn } from './helpers/agent.ts'
import { actionEvents, buildHeaterTrip, ACTIVATE, countRows } from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'
import { activateLimit } from './helpers/workflows.ts'

// The authorized window of a bypass and the role limits over its whole duration (docs/bypasses.md#rules):
// - a bypass is put in force no earlier than its planned start;
// - the review counts what was in force, by the times it was in force;
// - the role limits apply to the total duration since it was put in force, extensions included.

const ctx = useTestDb()
const PW = DEMO_PASSWORD
const HOUR = 3_600_000
const PEOPLE = ['engineer', 'approver', 'technician', 'supervisor', 'operator', 'manager'] as const

const { as, signInAll } = useSignedIn(ctx, PEOPLE, { at: '2026-07-06T06:00:00Z' })
/** A heater trip put in service whose own longest bypass is `maxBypassHours`. */
async function limitWithMaxBypass(maxBypassHours: number) {
  const { limit } = await buildHeaterTrip(as.engineer)
  const changed = (await as.engineer.patch(`/api/limits/${limit.id}`, { maxBypassHours }).expect(200)).body
  await activateLimit({ eng: as.engineer, approver: as.approver, tech: as.technician }, changed)
  return changed as { id: number; tag: string }
}

const ask = (limitId: number, start: string, hours: number) =>
  as.operator.post('/api/bypasses', {
    limitId,
    reason: 'Analyser change-out',
    plannedStart: start,
    plannedEnd: new Date(Date.parse(start) + hours * HOUR).toISOString(),
    predefinedMeasuresConfirmed: true,
  })

/** A bypass of the limit asked by the operator from `start` for `hours`, authorized by the shift supervisor. */
async function authorizedBypass(limitId: number, start: string, hours: number) {
  const b = (await ask(limitId, start, hours).expect(201)).body
  await as.supervisor.post(`/api/bypasses/${b.id}/authorizations`, { password: PW }).expect(200)
  return b
}

/** The operator removes the bypass, protection restored. */
const removeBypass = (id: number) =>
  as.operator
    .post(`/api/bypasses/${id}/removal`, { pvClearConfirmed: true, protectionRestoredConfirmed: true })
    .expect(200)

async function written() {
  const rows = await ctx.db
    .selectFrom('bypass')
    .select(['id', 'status', 'activated_at', 'planned_end'])
    .orderBy('id')
    .execute()
  return { audit: await actionEvents(ctx.db), rows, signatures: await countRows(ctx.db, 'signature') }
}

describe('a bypass is put in force no earlier than its planned start', () => {
  it('409 before the planned start, with the time in the site zone; 200 from the start on', async () => {
    ctx.clock.set('2026-07-06T06:00:00Z')
    await signInAll()
    const limit = await limitWithMaxBypass(24)
    // planned to start in 3 h (09:00 UTC, 11:00 in Europe/Berlin summer time)
    const b = await authorizedBypass(limit.id, '2026-07-06T09:00:00Z', 4)
    const before = await written()
    const early = await as.operator.post(`/api/bypasses/${b.id}/activation`, ACTIVATE).expect(409)
    expect(early.body.error.code).toBe('INVALID_STATE')
    expect(early.body.error.message).toContain('11:00 CEST')
    expect(early.body.error.message).toContain('request a bypass again')
    expect(await written()).toEqual(before)
    expect((await as.engineer.get(`/api/limits/${limit.id}`).expect(200)).body.protectionState).toBe('in_service')

    // one minute before: still refused; at the planned start: in force
    ctx.clock.set('2026-07-06T08:59:00Z')
    await signInAll()
    await as.operator.post(`/api/bypasses/${b.id}/activation`, ACTIVATE).expect(409)
    ctx.clock.set('2026-07-06T09:00:00Z')
    await signInAll()
    const active = (await as.operator.post(`/api/bypasses/${b.id}/activation`, ACTIVATE).expect(200)).body
    expect(active.status).toBe('active')
    expect(Date.parse(active.activatedAt) - Date.parse('2026-07-06T09:00:00Z')).toBeLessThan(60_000)
    // an authorization for a later start lapses 4 h after that start, not 4 h after it was signed
    const later = (await ask(limit.id, '2026-07-06T20:00:00Z', 2).expect(201)).body
    const auth = (await as.supervisor.post(`/api/bypasses/${later.id}/authorizations`, { password: PW }).expect(200))
      .body
    expect(auth.lapsesAt).toBe('2026-07-07T00:00:00.000Z')
    await as.operator.post(`/api/bypasses/${later.id}/cancellation`).expect(200)
    await removeBypass(b.id)
  })
})

describe('the review counts what was in force, by the times it was in force', () => {
  it('a bypass in force before its planned start (a record from before the rule) is in the history and "Active now"', async () => {
    ctx.clock.set('2026-07-08T06:00:00Z')
    await signInAll()
    const onTime = await limitWithMaxBypass(24)
    const early = await limitWithMaxBypass(24)
    // the test clock runs on while the two limits are put in service: 06:00 again for the request in force on time
    ctx.clock.set('2026-07-08T06:00:00Z')
    const a = await authorizedBypass(onTime.id, '2026-07-08T06:00:00Z', 6)
    await as.operator.post(`/api/bypasses/${a.id}/activation`, ACTIVATE).expect(200)
    const b = await authorizedBypass(early.id, '2026-07-08T09:00:00Z', 6)
    // recorded in force at 06:00 although planned from 09:00, as the product allowed before the rule
    await ctx.db
      .updateTable('bypass')
      .set({ status: 'active', activated_at: new Date('2026-07-08T06:00:00Z'), activated_by: a.requestedById })
      .where('id', '=', b.id)
      .execute()

    ctx.clock.set('2026-07-08T08:00:00Z')
    await signInAll()
    const r = (await as.manager.get('/api/bypass-review').expect(200)).body
    expect(r.items.map((x: { id: number }) => x.id)).toEqual(expect.arrayContaining([a.id, b.id]))
    expect(r.kpis.activeNow).toBe(2)
    // both in force since 06:00: 2 h each this month
    expect(r.kpis.hoursThisMonth).toBeCloseTo(4, 2)
    expect(
      r.charts.topLimits.map((t: { tag: string; hours: number }) => [t.tag, Math.round(t.hours * 100) / 100]),
    ).toEqual(
      expect.arrayContaining([
        [onTime.tag, 2],
        [early.tag, 2],
      ]),
    )
    // the list's period filter finds it by its time in force as well
    const list = (await as.manager.get(`/api/bypasses?to=2026-07-08T07:00:00Z&limitId=${early.id}`).expect(200)).body
    expect(list.items.map((x: { id: number }) => x.id)).toEqual([b.id])
    // a period that ended before this month still tells "Active now" as it is now
    const past = (await as.manager.get('/api/bypass-review?from=2026-05-01T00:00:00Z&to=2026-06-01T00:00:00Z')).body
    expect(past.kpis.activeNow).toBe(2)
    for (const id of [a.id, b.id])
      await as.operator
        .post(`/api/bypasses/${id}/removal`, { pvClearConfirmed: true, protectionRestoredConfirmed: true })
        .expect(200)
  })

  it('figures with nothing behind them are null ("—" on screen), not 0 h', async () => {
    // Saltmarsh Polymers has no bypass and no degraded limit
    const smp = ((await as.manager.get('/api/sites').expect(200)).body.items as { id: number; code: string }[]).find(
      (s) => s.code === 'SMP',
    )!
    const r = (await as.manager.get(`/api/bypass-review?siteId=${smp.id}`).expect(200)).body
    expect(r.kpis).toMatchObject({
      activeNow: 0,
      overdueNow: 0,
      hoursThisMonth: null,
      averageDurationHours: null,
      longerThanShift: 0,
      withoutMeasures: 0,
      hoursDegraded: null,
      sharePastPlannedEnd: null,
    })
  })
})

describe('the role limits apply to the total duration since the bypass was put in force', () => {
  it('a shift supervisor cannot extend an 11.9 h bypass past 12 h in all, however it is split; the plant manager can', async () => {
    ctx.clock.set('2026-07-10T06:00:00Z')
    await signInAll()
    const limit = await limitWithMaxBypass(100)
    const b = await authorizedBypass(limit.id, '2026-07-10T06:00:00Z', 11.9)
    await as.operator.post(`/api/bypasses/${b.id}/activation`, ACTIVATE).expect(200)
    // up to 12 h in all: allowed
    const to12 = (
      await as.supervisor.post(`/api/bypasses/${b.id}/authorizations`, { password: PW, hours: 0.1 }).expect(200)
    ).body
    expect(to12.plannedHours).toBeCloseTo(12, 9)
    // five more small steps were accepted before; now the first one past 12 h in all is refused, nothing written
    const before = await written()
    for (const hours of [0.1, 1, 12]) {
      const res = await as.supervisor.post(`/api/bypasses/${b.id}/authorizations`, { password: PW, hours }).expect(403)
      expect(res.body.error.message).toContain('12 h')
      expect(res.body.error.message).toContain('plant manager')
    }
    expect(await written()).toEqual(before)
    // the next role signs it: 12 h + 10 h = 22 h in all, within the plant manager's 72 h
    const byManager = (
      await as.manager.post(`/api/bypasses/${b.id}/authorizations`, { password: PW, hours: 10 }).expect(200)
    ).body
    expect(byManager.plannedHours).toBeCloseTo(22, 9)
    // and the plant manager's own limit counts the whole duration too: 22 h + 51 h = 73 h > 72 h
    const past72 = await as.manager
      .post(`/api/bypasses/${b.id}/authorizations`, { password: PW, hours: 51 })
      .expect(400)
    expect(past72.body.error.details.fields.hours[0]).toContain('temporary change request')
    await removeBypass(b.id)
  })

  it('the total counts from when it was put in force: a bypass started 2 h late leaves the supervisor 2 h more', async () => {
    ctx.clock.set('2026-07-11T06:00:00Z')
    await signInAll()
    const limit = await limitWithMaxBypass(100)
    const b = await authorizedBypass(limit.id, '2026-07-11T06:00:00Z', 10)
    ctx.clock.set('2026-07-11T08:00:00Z')
    await signInAll()
    await as.operator.post(`/api/bypasses/${b.id}/activation`, ACTIVATE).expect(200)
    // in force from 08:00 to the planned end 16:00 is 8 h; the supervisor may add 4 h (12 h in all), not 4.5 h
    await as.supervisor.post(`/api/bypasses/${b.id}/authorizations`, { password: PW, hours: 4.5 }).expect(403)
    const ok = (
      await as.supervisor.post(`/api/bypasses/${b.id}/authorizations`, { password: PW, hours: 4 }).expect(200)
    ).body
    expect(ok.plannedEnd).toBe('2026-07-11T20:00:00.000Z')
    await removeBypass(b.id)
  })
})

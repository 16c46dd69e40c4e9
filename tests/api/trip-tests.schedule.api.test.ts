import type { Express } from 'express'
import { beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { createTripTestJob } from '../../server/features/trip-tests/trip-tests.jobs.ts'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { crewAs, siteIdByCode } from './helpers/agent.ts'
import { useTestDb } from './helpers/test-db.ts'
import { activateLimit } from './helpers/workflows.ts'
import { recipients, useFakeSmtp } from './helpers/mail.ts'
import { countRows } from './helpers/factories.ts'

// Due dates on the API (docs/domain/due-dates.md): calendar months clamped to month end, dates in the site's time zone
// (Fernhollow Refinery: Europe/Berlin), grace, late and overdue; the weekly digest (Monday from 07:00 site time,
// once per ISO week) and the digest on demand (administrators).

const ctx = useTestDb()
const PW = DEMO_PASSWORD
const mailbox = useFakeSmtp(ctx)
let app: Express
const who = { eng: 'engineer', approver: 'approver', tech: 'technician', admin: 'admin', manager: 'manager' } as const
const { as: a, signInAll, signInAgain } = crewAs(() => app, who)
let fhr = 0
let smp = 0
let areas: { id: number; siteId: number }[] = []
let n = 0
// limits: A tested on 31 January (site time), B at 23:30 UTC on 31 January (1 February in Berlin), C never tested
const L = { a: { id: 0, tag: '' }, b: { id: 0, tag: '' }, c: { id: 0, tag: '' } }

/** Moves the clock; sessions end after 30 min idle on that clock, so everyone signs in again. */
async function at(iso: string) {
  ctx.clock.set(iso)
  await signInAgain()
}

/** An active type K high trip at 780 °C (0–1200 °C) at Fernhollow with the given test interval, in the given area. */
async function activeTrip(testIntervalMonths: number, areaId: number) {
  n += 1
  const proc = await a.eng.created('/api/processes', { areaId, name: `Schedule heater ${n}`, description: '' })
  const inst = await a.eng.created('/api/instruments', {
    processId: proc.id,
    tag: `SCH-TT-${n}`,
    measuredVariable: 'temperature',
    unit: '°C',
    rangeLow: 0,
    rangeHigh: 1200,
    normalLow: null,
    normalHigh: null,
    designLow: null,
    designHigh: null,
    burnout: 'upscale',
    signal: { kind: 'thermocouple', tcType: 'K', headTransmitter: false },
    deviceKind: 'limit_controller',
  })
  const limit = await a.eng.created('/api/limits', {
    processId: proc.id,
    instrumentIds: [inst.id],
    tag: `SCH-TSHH-${n}`,
    direction: 'high',
    limitClass: 'trip',
    setpoint: 780,
    deadband: 5,
    severity: 'severe',
    testIntervalMonths,
    latching: true,
    resetRole: 'operator',
    compensatingMeasures: ['Local reading'],
  })
  await activateLimit({ eng: a.eng, approver: a.approver, tech: a.tech }, limit)
  return { id: limit.id as number, tag: limit.tag as string }
}

async function tested(
  limitId: number,
  performedAt: string,
  result: Record<string, unknown> = { asFound: 781 },
  kind: 'full' | 'partial' = 'full',
) {
  const t = await a.tech.created('/api/trip-tests', {
    limitId,
    kind,
    method: 'injection',
    injectionPoint: 'sensor',
    sourceMode: 'tc_simulate',
    calibratorId: 'CAL-5',
    calibratorDueDate: '2026-12-31',
    performedAt,
    finalElementOk: true,
    ...result,
  })
  await a.tech.post(`/api/trip-tests/${t.id}/signatures`, { meaning: 'performed', password: PW }).expect(200)
  return t as { id: number; passed: boolean }
}

const limitNow = async (id: number) =>
  (await a.eng.get(`/api/limits/${id}`).expect(200)).body as {
    testStatus: string
    testDueDate: string | null
    lastFullPass: string | null
  }
type ScheduleItem = {
  limitId: number
  testStatus: string
  dueDate: string | null
  lastFullPass: string | null
  lateTests: number
  protectionState: string
}
const scheduleOf = async (query: string) =>
  (await a.tech.get(`/api/trip-tests/schedule?siteId=${fhr}&${query}`).expect(200)).body as {
    items: ScheduleItem[]
    counts: Record<string, number>
  }
const ids = (items: { limitId: number }[]) => items.map((i) => i.limitId)
const runJob = (iso: string) => createTripTestJob(ctx.db, ctx.config, ctx.clock).runDue(new Date(iso))
/** The clock moves to `iso` (everyone signs in again) and the schedule job runs then. */
async function runJobAt(iso: string) {
  await at(iso)
  return runJob(iso)
}
const digestMails = () =>
  ctx.db
    .selectFrom('mail_outbox')
    .select(['to_addr', 'subject', 'text_body'])
    .where('topic', '=', 'trip_test_digest')
    .orderBy('id')
    .execute()

beforeAll(async () => {
  ctx.clock.set('2026-01-31T23:45:00Z')
  app = createApp(ctx)
  await signInAll()
  fhr = await siteIdByCode(a.eng, 'FHR')
  smp = await siteIdByCode(a.eng, 'SMP')
  areas = (await a.eng.get('/api/areas').expect(200)).body.items
  const [crude, hydro] = areas.filter((x) => x.siteId === fhr)
  L.a = await activeTrip(1, crude.id)
  L.b = await activeTrip(1, crude.id)
  L.c = await activeTrip(12, hydro.id)
})

describe('due dates (docs/domain/due-dates.md)', () => {
  it("adds calendar months clamped to month end, in the site's time zone", async () => {
    // 10:00 UTC on 31 January is 11:00 in Berlin: + 1 month = 28 February (clamped; test-acceptance.md: 2025-01-31 + 1 month = 2025-02-28)
    await tested(L.a.id, '2026-01-31T10:00:00Z')
    // a monthly test is due soon only in its last 7 days (a quarter of the interval), not the day it passed
    expect(await limitNow(L.a.id)).toMatchObject({
      lastFullPass: '2026-01-31',
      testDueDate: '2026-02-28',
      testStatus: 'ok',
    })
    // 23:30 UTC on 31 January is 00:30 on 1 February in Berlin (CET, UTC+1): the test counts on the 1st → due 1 March
    await tested(L.b.id, '2026-01-31T23:30:00Z')
    expect(await limitNow(L.b.id)).toMatchObject({ lastFullPass: '2026-02-01', testDueDate: '2026-03-01' })
    expect(await limitNow(L.c.id)).toMatchObject({ testStatus: 'never_tested', testDueDate: null })

    const all = await scheduleOf('')
    expect(all.items.find((i) => i.limitId === L.a.id)).toMatchObject({
      dueDate: '2026-02-28',
      lastFullPass: '2026-01-31',
      testStatus: 'ok',
    })
    expect(ids((await scheduleOf('status=never_tested')).items)).toEqual([L.c.id])
    expect(all.counts).toMatchObject({ ok: 2, never_tested: 1 })
    // the counts follow the area filter as the list does
    const hydro = await scheduleOf(`areaId=${areas.filter((x) => x.siteId === fhr)[1].id}`)
    expect(ids(hydro.items)).toEqual([L.c.id])
    expect(hydro.counts).toEqual({ never_tested: 1 })
  })

  it('is in grace after the due date, overdue after the grace; a failed or partial test moves nothing, a passing full test inside the grace is late', async () => {
    // 1-month interval: default grace = 10 % of 730 h, rounded down = 3 days (docs/domain/due-dates.md) → A's grace ends 3 March
    await runJobAt('2026-03-01T09:00:00Z')
    expect((await limitNow(L.a.id)).testStatus).toBe('in_grace')
    expect(ids((await scheduleOf('status=in_grace')).items)).toContain(L.a.id)

    await tested(L.a.id, '2026-03-01T08:00:00Z', { asFound: 795 })
    await tested(L.a.id, '2026-03-01T08:30:00Z', { asFound: 780 }, 'partial')
    expect(await limitNow(L.a.id)).toMatchObject({
      lastFullPass: '2026-01-31',
      testDueDate: '2026-02-28',
      testStatus: 'in_grace',
    })

    // 3 March, the last day of the grace: the passing retest is late, and the due date counts from it
    await at('2026-03-03T10:00:00Z')
    await tested(L.a.id, '2026-03-03T09:00:00Z', { asFound: 779 })
    expect(await limitNow(L.a.id)).toMatchObject({
      lastFullPass: '2026-03-03',
      testDueDate: '2026-04-03',
      testStatus: 'ok',
    })
    const late = (await scheduleOf('late=true')).items
    expect(ids(late)).toEqual([L.a.id])
    // both full tests after the due date fell inside the grace (the failed one of 1 March and the retest of 3 March)
    expect(late[0].lateTests).toBe(2)

    // B was due 1 March, grace to 4 March: on 5 March it is overdue
    await runJobAt('2026-03-05T09:00:00Z')
    expect((await limitNow(L.b.id)).testStatus).toBe('overdue')
    const overdue = await scheduleOf('status=overdue')
    expect(ids(overdue.items)).toEqual([L.b.id])
    // A is due on 3 April, 29 days after 5 March: beyond the 7-day look-ahead of a monthly test, so not yet due soon
    expect(overdue.counts).toEqual({ overdue: 1, never_tested: 1, ok: 1 })
  })
})

describe("the weekly digest (Monday from 07:00 in each site's time zone, once per ISO week)", () => {
  it("reaches the site's technicians and safety engineers once a week, at each site's own 07:00", async () => {
    // Monday 9 March 2026: Berlin is on CET (UTC+1), Chicago already on CDT (UTC−5, since 8 March)
    const before = (await digestMails()).length
    expect(before).toBe(0)
    expect(await runJob('2026-03-09T05:59:00Z')).toMatchObject({ digests: 0 })
    expect(await runJob('2026-03-09T06:00:00Z')).toMatchObject({ digests: 1 })
    const fhrMails = await digestMails()
    expect(fhrMails.map((m) => m.to_addr).sort()).toEqual([
      'engineer@fernhollow.example',
      'technician@fernhollow.example',
    ])
    expect(fhrMails[0].subject).toBe('Trip tests due at Fernhollow Refinery (2026-W11)')
    expect(fhrMails[0].text_body).toContain(L.b.tag)
    expect(fhrMails[0].text_body).toContain(L.c.tag)
    expect(fhrMails[0].text_body).toContain('never tested')

    // again the same week: nothing more
    expect(await runJob('2026-03-09T08:00:00Z')).toMatchObject({ digests: 0 })
    expect(await runJob('2026-03-09T11:59:00Z')).toMatchObject({ digests: 0 })
    // 07:00 in Chicago: Saltmarsh Polymers' turn
    expect(await runJob('2026-03-09T12:00:00Z')).toMatchObject({ digests: 1 })
    expect(await runJob('2026-03-10T06:00:00Z')).toMatchObject({ digests: 0 })
    expect(await runJob('2026-03-15T06:00:00Z')).toMatchObject({ digests: 0 })
    expect((await digestMails()).filter((m) => m.subject.includes('Saltmarsh Polymers (2026-W11)'))).toHaveLength(2)
    // the next Monday is a new ISO week
    expect(await runJob('2026-03-16T06:30:00Z')).toMatchObject({ digests: 1 })
    expect(
      (await digestMails()).filter((m) => m.subject === 'Trip tests due at Fernhollow Refinery (2026-W12)'),
    ).toHaveLength(2)

    // delivered through the fake SMTP server with the link to the schedule
    const mails = await mailbox.mailsFor('Trip tests due at Fernhollow Refinery (2026-W12)', [
      'technician@fernhollow.example',
    ])
    const mail = mails.find((m) => recipients(m).includes('technician@fernhollow.example'))!
    expect(mail.text).toContain(`${ctx.config.appUrl}/tests/schedule?siteId=${fhr}`)
  })

  it('runs on demand for administrators only, writing nothing for anyone else', async () => {
    await at('2026-03-17T09:00:00Z')
    const count = async () => ({
      mails: (await digestMails()).length,
      log: await countRows(ctx.db, 'digest_log'),
    })
    const before = await count()
    for (const k of ['eng', 'tech', 'manager', 'approver'] as const)
      await a[k].post('/api/trip-tests/digest-runs', { siteId: fhr }).expect(403)
    expect(await count()).toEqual(before)
    const run = await a.admin.created('/api/trip-tests/digest-runs', { siteId: fhr })
    // B is overdue and C never tested; A (monthly) is due on 3 April, 17 days ahead: outside its 7-day look-ahead
    expect(run).toEqual({ sent: 2, overdue: 2, dueSoon: 0 })
    const after = await count()
    expect(after).toEqual({ mails: before.mails + 2, log: before.log + 1 })
    expect((await digestMails()).slice(-1)[0].subject).toBe('Trip tests due at Fernhollow Refinery (on request)')
    await a.admin.post('/api/trip-tests/digest-runs', { siteId: smp }).expect(201)
  })
})

describe('the schedule job touches only limits whose status the calendar changes (docs/domain/due-dates.md)', () => {
  it('refreshes nothing on an ordinary hour, the one limit whose day has come on that day, and none twice', async () => {
    // A (monthly) passed on 3 March: due 3 April, due soon from 27 March (7-day look-ahead of a monthly test);
    // B is overdue and C never tested, which the calendar no longer changes
    expect(await runJobAt('2026-03-20T09:00:00Z')).toMatchObject({ refreshed: 0 })
    expect((await limitNow(L.a.id)).testStatus).toBe('ok')
    // 27 March 00:30 in Berlin (CET) is 26 March 23:30 UTC: the site's own day decides
    expect(await runJobAt('2026-03-26T23:30:00Z')).toMatchObject({ refreshed: 1 })
    expect((await limitNow(L.a.id)).testStatus).toBe('due_soon')
    expect(await runJob('2026-03-27T09:00:00Z')).toMatchObject({ refreshed: 0 })
    // 4 April: in grace (due 3 April, 3 days' grace to 6 April), then overdue from 7 April
    expect(await runJobAt('2026-04-04T09:00:00Z')).toMatchObject({ refreshed: 1 })
    expect((await limitNow(L.a.id)).testStatus).toBe('in_grace')
    expect(await runJobAt('2026-04-07T09:00:00Z')).toMatchObject({ refreshed: 1 })
    expect((await limitNow(L.a.id)).testStatus).toBe('overdue')
    expect(await runJob('2026-04-07T10:00:00Z')).toMatchObject({ refreshed: 0 })
  })

  it("a change of the site's policy makes the job refresh every active limit of that site once", async () => {
    const policy = (await a.admin.get(`/api/sites/${fhr}`).expect(200)).body.policy
    await a.admin.patch(`/api/sites/${fhr}`, { policy: { ...policy } }).expect(200)
    const active = await ctx.db
      .selectFrom('limit_function')
      .select((eb) => eb.fn.countAll<string>().as('n'))
      .where('site_id', '=', fhr)
      .where('status', '=', 'active')
      .executeTakeFirstOrThrow()
    expect(await runJob('2026-04-07T11:00:00Z')).toMatchObject({ refreshed: Number(active.n) })
    expect(await runJob('2026-04-07T12:00:00Z')).toMatchObject({ refreshed: 0 })
  })
})

import type { Express } from 'express'
import { beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { type ApiAgent, signedIn } from './helpers/agent.ts'
import { buildHeaterTrip, countRows } from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'

// sessions outlive the 2-hour clock move of the overdue test
const ctx = useTestDb({ env: { SESSION_IDLE_MINUTES: '600' } })
let app: Express
let eng: ApiAgent
let op: ApiAgent
let sup: ApiAgent
let tech: ApiAgent
let fixture: Awaited<ReturnType<typeof buildHeaterTrip>>
let alarm: { id: number; tag: string }

const stateCount = () => countRows(ctx.db, 'alarm_state')

beforeAll(async () => {
  app = createApp(ctx, { serveClient: false })
  ;[eng, op, sup, tech] = await Promise.all(
    ['engineer', 'operator', 'supervisor', 'technician'].map((w) => signedIn(app, w)),
  )
  fixture = await buildHeaterTrip(eng)
  alarm = await eng.created('/api/limits', {
    processId: fixture.proc.id,
    instrumentIds: [fixture.inst.id],
    tag: `TAH-${fixture.inst.tag}`,
    direction: 'high',
    limitClass: 'alarm',
    setpoint: 700,
    deadband: 0,
    severity: 'minor',
    responseTimeMin: 10,
    testIntervalMonths: 12,
  })
})

describe('alarm states (rule book shared/domain/rules/alarm-states.ts)', () => {
  const shelve = (a: ApiAgent, body: Record<string, unknown>) =>
    a.post('/api/alarm-states', {
      siteId: fixture.site.id,
      kind: 'shelved',
      reason: 'Transmitter on test',
      hours: 2,
      ...body,
    })

  it('an operator shelves a plain alarm; a second state on it is refused (409)', async () => {
    const r = await shelve(op, { tag: alarm.tag.toLowerCase() }).expect(201)
    expect(r.body).toMatchObject({
      tag: alarm.tag,
      kind: 'shelved',
      status: 'active',
      limitId: alarm.id,
      overdue: false,
    })
    const before = await stateCount()
    await shelve(op, { tag: alarm.tag }).expect(409)
    expect(await stateCount()).toBe(before)
  })

  it('shelving past the site maximum is refused (422) and writes nothing', async () => {
    const before = await stateCount()
    // no priority on the alarm counts as low: 12 h at most (site policy default)
    const r = await shelve(op, { tag: 'XA-1', hours: 12.5 }).expect(422)
    expect(r.body.error.message).toMatch(/at most 12 h/)
    expect(await stateCount()).toBe(before)
  })

  it('a safety-related alarm (a trip) is shelved only with a shift supervisor’s signature', async () => {
    const before = await stateCount()
    await shelve(op, { tag: fixture.limit.tag }).expect(403)
    await shelve(sup, { tag: fixture.limit.tag }).expect(403)
    await shelve(sup, { tag: fixture.limit.tag, password: 'wrong password' }).expect(403)
    expect(await stateCount()).toBe(before)
    const r = await shelve(sup, { tag: fixture.limit.tag, password: DEMO_PASSWORD }).expect(201)
    expect(r.body.signed).toBe(true)
  })

  it('out of service needs a supervisor’s signature and ends with a return-to-service record', async () => {
    const outOfService = {
      siteId: fixture.site.id,
      tag: 'PA-77',
      kind: 'out_of_service',
      reason: 'Sensor replaced',
      hours: 8,
      password: DEMO_PASSWORD,
    }
    await tech.post('/api/alarm-states', outOfService).expect(403)
    const oos = await sup.created('/api/alarm-states', outOfService)
    await eng.post(`/api/alarm-states/${oos.id}/end`, { note: 'done' }).expect(403)
    const ended = (
      await tech.post(`/api/alarm-states/${oos.id}/end`, { note: 'Loop checked, alarm tested at setpoint' }).expect(200)
    ).body
    expect(ended).toMatchObject({ status: 'ended', endNote: 'Loop checked, alarm tested at setpoint' })
  })

  it('a state past its time is listed as overdue (moved clock)', async () => {
    const list = async () => (await op.get(`/api/alarm-states?overdue=true&siteId=${fixture.site.id}`).expect(200)).body
    expect((await list()).total).toBe(0)
    ctx.clock.advance(2 * 3_600_000) // the 2-hour shelvings end now: `until` is inclusive
    const overdue = await list()
    expect(overdue.items.map((s: { tag: string }) => s.tag).sort()).toEqual([alarm.tag, fixture.limit.tag].sort())
  })
})

describe('replays', () => {
  // high alarm at 700, deadband 0: 695 for 10 s, then 701 / 699 alternating every 5 s until 69 s, then 690
  const rows = ['time,' + 'VALUE']
  for (let s = 0; s <= 200; s++) {
    const v = s < 10 ? 695 : s < 70 ? (Math.floor((s - 10) / 5) % 2 === 0 ? 701 : 699) : 690
    rows.push(`2026-07-01 10:${String(Math.floor(s / 60)).padStart(2, '0')}:${String(s % 60).padStart(2, '0')},${v}`)
  }
  const trend = { name: 'trend.csv', content: rows.join('\n') }
  let uploadId = 0

  it('streams the export into samples in the background', async () => {
    const r = await eng
      .upload('/api/replays', { siteId: fixture.site.id, instrumentId: fixture.inst.id, timeZone: 'UTC' }, trend)
      .expect(202)
    uploadId = r.body.id
    const deadline = Date.now() + 20_000
    let u = r.body
    while (u.status !== 'done' && u.status !== 'failed' && Date.now() < deadline) {
      await new Promise((res) => setTimeout(res, 50))
      u = (await eng.get(`/api/replays/${uploadId}`).expect(200)).body
    }
    expect(u).toMatchObject({ status: 'done', rowsRead: 201, samplesStored: 201, rowsRejected: 0 })
  })

  it('replays the alarm: before, what-if and the suggestion (worked by hand)', async () => {
    const run = (
      await eng
        .post(`/api/replays/${uploadId}/run`, {
          limitId: alarm.id,
          whatIf: { deadband: 3, onDelaySec: 0, offDelaySec: 0 },
        })
        .expect(200)
    ).body
    expect(run.samples).toBe(201)
    const l = run.limits[0]
    // before: active at 10, 20, … 60 s (701 ≥ 700), returns at 15, 25, … 65 s (699 < 700): 6 × 5 s in alarm
    expect(l.before.activations).toHaveLength(6)
    expect(l.before.activations[0]).toBe('2026-07-01T10:00:10.000Z')
    expect(l.before).toMatchObject({ chatterEpisodes: 1, timeInAlarmSec: 30 })
    // what-if deadband 3: 699 is not below 697, so one activation at 10 s, return at 70 s (690)
    expect(l.after).toMatchObject({ chatterEpisodes: 0, timeInAlarmSec: 60, firstActivationDelaySec: 0 })
    expect(l.after.activations).toHaveLength(1)
    // suggestion: deadband 0 (smallest), on-delay 0, off-delay 5 s. Each 699 spell (15–19 s, …) is ended by a 701 at
    // exactly 5 s, so the return condition never holds for the off-delay until the last one: 699 from 65 s, then
    // 690 — held 5 s at 70 s → one activation, 10 s to 70 s = 60 s in alarm, the first activation not delayed
    expect(l.suggestion).toMatchObject({
      deadband: 0,
      onDelaySec: 0,
      offDelaySec: 5,
      chatterEpisodes: 0,
      timeInAlarmSec: 60,
      firstActivationDelaySec: 0,
    })
  })

  it('refuses an operator’s upload (403) and a run on an unknown upload (404)', async () => {
    await op.upload('/api/replays', { siteId: fixture.site.id, timeZone: 'UTC' }, trend).expect(403)
    await eng.post('/api/replays/999999/run', {}).expect(404)
  })
})

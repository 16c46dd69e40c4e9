import type { Express } from 'express'
import { beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { type ApiAgent, signedIn } from './helpers/agent.ts'
import { buildHeaterTrip, countRows, passingHeaterTest } from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'
import { activateLimit } from './helpers/workflows.ts'

// The precautions recorded with a trip test and the signed return-to-service check (docs/trip-tests.md#precautions,
// docs/trip-tests.md#who-signs). The precautions are common practice for work on safety instrumented systems (permit
// to work, control room informed, intrinsically safe equipment and gas test in hazardous areas); the separate
// return-to-service signature follows IEC 61511-1 §16.2 on bypasses and overrides being removed after testing (from
// memory).

const ctx = useTestDb()
const PW = DEMO_PASSWORD
let app: Express
const a = {} as Record<'eng' | 'approver' | 'tech' | 'sup' | 'operator', ApiAgent>
let limitId = 0

const SAFE = {
  isolated: true,
  permitToWork: 'PTW-2026-0412',
  controlRoomInformed: true,
  hazardousArea: true,
  intrinsicallySafeCalibrator: true,
  gasTestDone: true,
  realTripAcknowledged: false,
}

/** A passing full test of the type K heater trip (780 °C, ± 6 °C, as found 781.5 °C), with its precautions. */
const body = (over: Record<string, unknown> = {}, precautions: Record<string, unknown> | null = SAFE) =>
  passingHeaterTest(limitId, { precautions, ...over })

const count = async () => countRows(ctx.db, 'trip_test')

beforeAll(async () => {
  ctx.clock.set('2026-04-14T09:00:00Z')
  app = createApp(ctx)
  const account: Record<string, string> = { eng: 'engineer', sup: 'supervisor', tech: 'technician' }
  for (const who of ['eng', 'approver', 'tech', 'sup', 'operator'] as const)
    a[who] = await signedIn(app, account[who] ?? who)
  const { limit } = await buildHeaterTrip(a.eng)
  await activateLimit({ eng: a.eng, approver: a.approver, tech: a.tech }, limit)
  limitId = limit.id
})

describe('precautions before the test', () => {
  it('are stored with the record and read back as confirmed', async () => {
    const t = await a.tech.created('/api/trip-tests', body())
    expect(t.precautions).toEqual(SAFE)
    const row = await ctx.db
      .selectFrom('trip_test')
      .select('precautions')
      .where('id', '=', t.id)
      .executeTakeFirstOrThrow()
    expect(row.precautions).toEqual(SAFE)
    expect((await a.sup.get(`/api/trip-tests/${t.id}`).expect(200)).body.precautions).toEqual(SAFE)
  })

  it.each([
    ['the control room not informed', {}, { controlRoomInformed: false }, 'precautions.controlRoomInformed'],
    ['no permit to work', {}, { permitToWork: '  ' }, 'precautions.permitToWork'],
    ['no gas test in a hazardous area', {}, { gasTestDone: false }, 'precautions.gasTestDone'],
    [
      'a calibrator that is not intrinsically safe in a hazardous area',
      {},
      { intrinsicallySafeCalibrator: false },
      'precautions.intrinsicallySafeCalibrator',
    ],
    [
      'the process driven to the trip point without the real trip acknowledged',
      { method: 'process', injectionPoint: null, sourceMode: null },
      {},
      'precautions.realTripAcknowledged',
    ],
    [
      'the setpoint moved without the real trip acknowledged',
      { method: 'setpoint_lowered', injectionPoint: null, sourceMode: null, setpointRestoredReadBack: 780 },
      {},
      'precautions.realTripAcknowledged',
    ],
  ])('refuses %s with 400 at the field, writing nothing', async (_what, over, precautions, field) => {
    const before = await count()
    const res = await a.tech.post('/api/trip-tests', body(over, { ...SAFE, ...precautions })).expect(400)
    expect(Object.keys(res.body.error.details.fields)).toContain(field)
    expect(await count()).toBe(before)
  })

  it('accepts a real-trip method once the trip is acknowledged, and no gas test outside a hazardous area', async () => {
    const t = await a.tech.created(
      '/api/trip-tests',
      body(
        { method: 'process', injectionPoint: null, sourceMode: null },
        {
          ...SAFE,
          isolated: false,
          hazardousArea: false,
          intrinsicallySafeCalibrator: null,
          gasTestDone: null,
          realTripAcknowledged: true,
        },
      ),
    )
    expect(t.precautions).toMatchObject({ isolated: false, realTripAcknowledged: true, gasTestDone: null })
  })
})

describe('the return-to-service check: its own signature, before acceptance', () => {
  it("answers each person's actions and refuses acceptance until the return to service is signed", async () => {
    const t = await a.tech.created('/api/trip-tests', body())
    const sign = (who: keyof typeof a, meaning: string) =>
      a[who].post(`/api/trip-tests/${t.id}/signatures`, { meaning, password: PW })
    await sign('tech', 'performed').expect(200)

    // the record carries the rule book's answers for the caller, and the server refuses what they refuse
    const asOperator = (await a.operator.get(`/api/trip-tests/${t.id}`).expect(200)).body
    expect(asOperator.actions.signAccepted).toMatchObject({ allowed: false, status: 409 })
    expect(asOperator.actions.signAccepted.reason).toContain('return-to-service')
    expect(asOperator.actions.signReturnedToService).toMatchObject({ allowed: false, status: 403 })
    const refused = await sign('operator', 'accepted').expect(409)
    expect(refused.body.error.message).toContain('return-to-service')
    expect((await a.tech.get(`/api/trip-tests/${t.id}`).expect(200)).body.actions.signReturnedToService).toEqual({
      allowed: true,
    })

    const returned = (await sign('tech', 'returned_to_service').expect(200)).body
    expect(returned.status).toBe('signed')
    expect(returned.signatures.map((s: { meaning: string }) => s.meaning)).toEqual(['performed', 'returned_to_service'])
    expect((await a.operator.get(`/api/trip-tests/${t.id}`).expect(200)).body.actions.signAccepted).toEqual({
      allowed: true,
    })
    const accepted = (await sign('operator', 'accepted').expect(200)).body
    expect(accepted.status).toBe('completed')
  })
})

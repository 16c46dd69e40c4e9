import { describe, expect, it } from 'vitest'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { useSignedIn } from './helpers/agent.ts'
import { buildHeaterTrip } from './helpers/factories.ts'
import { recipients, useFakeSmtp } from './helpers/mail.ts'
import { useTestDb } from './helpers/test-db.ts'
import { activateLimit } from './helpers/workflows.ts'

// A failed test degrades the limit (docs/trip-tests.md#degraded-limits): as found out on the dangerous side or no trip, or as left out of
// tolerance. Engineers and the shift supervisor hear of it at once; only a passing FULL retest clears it, and only
// passing full tests move the due date (docs/domain/due-dates.md).

const ctx = useTestDb()
const PW = DEMO_PASSWORD
const mailbox = useFakeSmtp(ctx)
const { as: a, at } = useSignedIn(ctx, ['engineer', 'approver', 'technician', 'supervisor', 'operator'], {
  at: '2026-06-08T08:00:00Z',
})

/** The type K heater trip at 780 °C, 0–1200 °C, interval 12 months, put in service. */
async function activeHeaterTrip() {
  const { limit } = await buildHeaterTrip(a.engineer)
  await activateLimit({ eng: a.engineer, approver: a.approver, tech: a.technician }, limit)
  return limit as { id: number; tag: string; siteId: number }
}

/** Records a full test (tolerance ±6 °C = 0.5 % of the 1200 °C span, docs/trip-tests.md#judging-a-test) and, unless told not to, signs it as performer. */
async function tested(
  limitId: number,
  performedAt: string,
  result: Record<string, unknown>,
  opts: { kind?: 'full' | 'partial'; sign?: boolean } = {},
) {
  const t = await a.technician.created('/api/trip-tests', {
    limitId,
    kind: opts.kind ?? 'full',
    method: 'injection',
    injectionPoint: 'sensor',
    sourceMode: 'tc_simulate',
    calibratorId: 'CAL-21',
    calibratorDueDate: '2027-01-31',
    performedAt,
    finalElementOk: true,
    latchHeld: true,
    ...result,
  })
  if (opts.sign === false) return t
  return (
    await a.technician.post(`/api/trip-tests/${t.id}/signatures`, { meaning: 'performed', password: PW }).expect(200)
  ).body
}

const limitNow = async (id: number) =>
  (await a.engineer.get(`/api/limits/${id}`).expect(200)).body as {
    protectionState: string
    testStatus: string
    testDueDate: string | null
    lastFullPass: string | null
    tag: string
  }

describe('the degraded state', () => {
  it("appears when the performer signs a test that did not trip, with mail at once to the site's engineers and shift supervisor", async () => {
    const limit = await activeHeaterTrip()
    expect((await limitNow(limit.id)).protectionState).toBe('in_service')

    const recorded = await tested(limit.id, '2026-06-08T07:30:00Z', { noTrip: true }, { sign: false })
    expect(recorded).toMatchObject({ asFound: null, asFoundResult: 'no_trip', asLeftResult: 'out', passed: false })
    expect(recorded.failReasons).toContain('It did not trip')
    // a record alone changes nothing: the result applies when the performer signs
    expect((await limitNow(limit.id)).protectionState).toBe('in_service')

    await a.technician
      .post(`/api/trip-tests/${recorded.id}/signatures`, { meaning: 'performed', password: PW })
      .expect(200)
    const degraded = await limitNow(limit.id)
    expect(degraded.protectionState).toBe('degraded')
    // a failed test is no completed full test: the limit stays never tested, with no due date
    expect(degraded).toMatchObject({ testStatus: 'never_tested', testDueDate: null, lastFullPass: null })
    const inRegister = (await a.engineer.get('/api/limits?protectionState=degraded&pageSize=200').expect(200)).body
      .items as { id: number }[]
    expect(inRegister.map((l) => l.id)).toContain(limit.id)

    const history = (await a.engineer.get(`/api/limits/${limit.id}/degradation`).expect(200)).body.items
    expect(history).toHaveLength(1)
    expect(history[0]).toMatchObject({
      testId: recorded.id,
      clearedAt: null,
      compensatingMeasures: null,
      repairDeadline: null,
    })
    expect(history[0].reasons).toContain('It did not trip')

    // the outbox, delivered through the fake SMTP server (the production path)
    const mails = await mailbox.mailsFor(`DEGRADED: ${limit.tag} failed its trip test`, [
      'engineer@fernhollow.example',
      'supervisor@fernhollow.example',
    ])
    expect(mails.flatMap(recipients).sort()).toEqual(['engineer@fernhollow.example', 'supervisor@fernhollow.example'])
    expect(mails[0].text).toContain('It did not trip')
    expect(mails[0].text).toContain(`${ctx.config.appUrl}/tests/${recorded.id}`)
  })

  it('lets only a shift supervisor record and sign the compensating measures and repair deadline', async () => {
    const limit = await activeHeaterTrip()
    const url = `/api/limits/${limit.id}/degradation`
    const measures = {
      compensatingMeasures: ['Operator reads the local indicator every 15 minutes', 'Burner firing limited to 80 %'],
      repairDeadline: '2026-06-12',
      password: PW,
    }
    // not degraded yet: nothing to sign
    expect((await a.supervisor.post(url, measures).expect(409)).body.error.code).toBe('INVALID_STATE')

    await tested(limit.id, '2026-06-08T07:40:00Z', { asFound: 790 })
    for (const k of ['technician', 'operator', 'engineer', 'approver'] as const)
      await a[k].post(url, measures).expect(403)
    expect(
      (await a.supervisor.post(url, { ...measures, password: 'wrong-password' }).expect(403)).body.error.code,
    ).toBe('SIGNATURE_INVALID')
    const none = await a.supervisor.post(url, { ...measures, compensatingMeasures: [] }).expect(400)
    expect(none.body.error.details.fields.compensatingMeasures).toHaveLength(1)
    const unsigned = (await a.engineer.get(url).expect(200)).body.items[0]
    expect(unsigned).toMatchObject({ compensatingMeasures: null, measuresSignedBy: null })

    const signed = (await a.supervisor.post(url, measures).expect(200)).body.items[0]
    expect(signed).toMatchObject({
      compensatingMeasures: measures.compensatingMeasures,
      repairDeadline: '2026-06-12',
      measuresSignedBy: 'Hedda Marlowe',
      clearedAt: null,
    })
    // the clock set by the test runs on from there
    expect(signed.measuresSignedAt.startsWith('2026-06-08T08:0')).toBe(true)
  })

  it('clears only with a passing FULL retest; a passing partial test and an unsigned record do not clear it, and only passing full tests move the due date', async () => {
    await at('2026-06-08T08:00:00Z')
    const limit = await activeHeaterTrip()
    await tested(limit.id, '2026-06-08T07:50:00Z', { asFound: 781 })
    expect(await limitNow(limit.id)).toMatchObject({
      protectionState: 'in_service',
      testStatus: 'ok',
      lastFullPass: '2026-06-08',
      testDueDate: '2027-06-08',
    })

    // a day later: found in tolerance but left out of it (adjusted to 795 °C): the as-left fails the test
    await at('2026-06-09T10:00:00Z')
    const failed = await tested(limit.id, '2026-06-09T09:00:00Z', { asFound: 781, asLeft: 795 })
    expect(failed).toMatchObject({ asFoundResult: 'in_tolerance', asLeftResult: 'out', passed: false })
    expect(await limitNow(limit.id)).toMatchObject({
      protectionState: 'degraded',
      lastFullPass: '2026-06-08',
      testDueDate: '2027-06-08',
    })

    await at('2026-06-10T10:00:00Z')
    const partial = await tested(limit.id, '2026-06-10T09:00:00Z', { asFound: 780 }, { kind: 'partial' })
    expect(partial.passed).toBe(true)
    expect(await limitNow(limit.id)).toMatchObject({
      protectionState: 'degraded',
      lastFullPass: '2026-06-08',
      testDueDate: '2027-06-08',
    })

    await at('2026-06-11T10:00:00Z')
    const retest = await tested(limit.id, '2026-06-11T09:00:00Z', { asFound: 782, asLeft: 780 }, { sign: false })
    expect(retest.passed).toBe(true)
    expect((await limitNow(limit.id)).protectionState).toBe('degraded')
    await a.technician
      .post(`/api/trip-tests/${retest.id}/signatures`, { meaning: 'performed', password: PW })
      .expect(200)
    // due date = date of the passing retest + 12 months (docs/domain/due-dates.md)
    expect(await limitNow(limit.id)).toMatchObject({
      protectionState: 'in_service',
      testStatus: 'ok',
      lastFullPass: '2026-06-11',
      testDueDate: '2027-06-11',
    })
    const history = (await a.engineer.get(`/api/limits/${limit.id}/degradation`).expect(200)).body.items
    expect(history[0]).toMatchObject({ testId: failed.id, clearedByTestId: retest.id })
    expect(history[0].clearedAt.startsWith('2026-06-11T10:0')).toBe(true)
  })

  it('judges out on the safe side by the as-left: adjusted back into tolerance it passes, left as found it fails', async () => {
    await at('2026-06-12T10:00:00Z')
    const limit = await activeHeaterTrip()
    // 770 °C on a 780 °C high trip (±6 °C) trips early: out on the safe side (test-acceptance.md, common practice)
    const adjusted = await tested(limit.id, '2026-06-12T09:00:00Z', { asFound: 770, asLeft: 779 }, { sign: false })
    expect(adjusted).toMatchObject({ asFoundResult: 'out_safe', asLeftResult: 'in_tolerance', passed: true })
    const leftAsFound = await tested(limit.id, '2026-06-12T09:10:00Z', { asFound: 770 }, { sign: false })
    expect(leftAsFound).toMatchObject({ asFoundResult: 'out_safe', asLeftResult: 'out', passed: false })
    // 773.9 is 6.1 °C below: safe side; 774 is exactly at the band's edge: in tolerance
    expect((await tested(limit.id, '2026-06-12T09:20:00Z', { asFound: 774 }, { sign: false })).asFoundResult).toBe(
      'in_tolerance',
    )
    expect(
      (await tested(limit.id, '2026-06-12T09:30:00Z', { asFound: 773.9, asLeft: 780 }, { sign: false })).asFoundResult,
    ).toBe('out_safe')
    expect(
      (await tested(limit.id, '2026-06-12T09:40:00Z', { asFound: 786.1, asLeft: 780 }, { sign: false })).asFoundResult,
    ).toBe('out_dangerous')
    // the final element must act
    expect(
      (await tested(limit.id, '2026-06-12T09:50:00Z', { asFound: 780, finalElementOk: false }, { sign: false })).passed,
    ).toBe(false)
  })
})

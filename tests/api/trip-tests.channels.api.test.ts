import { describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { signedIn } from './helpers/agent.ts'
import { simulatorTest } from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'

// A 2oo3 function tested channel by channel (docs/trip-tests.md#voted-functions): the demo register's TSHH-101, the
// crude heater outlet high-high trip at 385 °C on TT-101A/B/C voting 2oo3. Expected values are worked out by hand:
// MooN acts when M of N channels trip (IEC 61511-1 definitions, from memory); a channel that does not trip fails the
// test even when the vote acts (common practice; ISA-TR84.00.03 and IEC 61511-1 §16.3 on proving each device, from
// memory).

const ctx = useTestDb({ register: true })

async function setUp() {
  ctx.clock.set('2026-03-02T09:00:00Z')
  const app = createApp(ctx)
  const tech = await signedIn(app, 'technician')
  const eng = await signedIn(app, 'engineer')
  const found = (await eng.get('/api/limits?q=TSHH-101&pageSize=5').expect(200)).body.items as {
    id: number
    tag: string
    instrumentIds: number[]
    testStatus: string
  }[]
  const limit = found.find((l) => l.tag === 'TSHH-101')!
  expect(limit.instrumentIds).toHaveLength(3)
  const tags = await Promise.all(
    limit.instrumentIds.map(async (id) => (await eng.get(`/api/instruments/${id}`).expect(200)).body.tag as string),
  )
  expect(tags).toEqual(['TT-101A', 'TT-101B', 'TT-101C'])
  return { tech, eng, limit }
}

const base = (limitId: number) =>
  simulatorTest(limitId, {
    performedAt: '2026-03-02T08:00:00Z',
    tolerance: 5,
    toleranceUnit: 'eu',
    finalElementOk: true,
  })

describe('2oo3 trip test channel by channel', () => {
  it('judges each channel and the vote; a channel that did not trip fails the test and degrades the limit', async () => {
    const { tech, eng, limit } = await setUp()
    const [a, b, c] = limit.instrumentIds

    // two channels for a 2oo3 function: refused with the channels named, nothing written
    const short = await tech
      .post('/api/trip-tests', {
        ...base(limit.id),
        channels: [
          { instrumentId: a, asFound: 384 },
          { instrumentId: b, asFound: 386 },
        ],
      })
      .expect(400)
    expect(short.body.error.details.fields.channels[0]).toContain('votes 2oo3')
    expect(short.body.error.details.fields.channels[0]).toContain('TT-101A, TT-101B, TT-101C')
    expect((await eng.get(`/api/trip-tests?limitId=${limit.id}`).expect(200)).body.total).toBe(0)

    // 383 and 386 trip within 385 ± 5; TT-101C does not trip
    const failed = await tech.created('/api/trip-tests', {
      ...base(limit.id),
      channels: [
        { instrumentId: a, asFound: 383 },
        { instrumentId: b, asFound: 386 },
        { instrumentId: c, noTrip: true },
      ],
    })
    expect(
      failed.channels.map((x: { tag: string; asFoundResult: string; passed: boolean }) => [
        x.tag,
        x.asFoundResult,
        x.passed,
      ]),
    ).toEqual([
      ['TT-101A', 'in_tolerance', true],
      ['TT-101B', 'in_tolerance', true],
      ['TT-101C', 'no_trip', false],
    ])
    // the vote is reached (2 of 3) at the second channel to trip on a rising temperature: 386
    expect(failed.voting).toEqual({ architecture: '2oo3', required: 2, tripped: 2, acted: true })
    expect(failed.asFound).toBe(386)
    expect(failed.passed).toBe(false)
    expect(JSON.stringify(failed)).toContain('Channel TT-101C: did not trip')

    await tech
      .post(`/api/trip-tests/${failed.id}/signatures`, { meaning: 'performed', password: DEMO_PASSWORD })
      .expect(200)
    expect((await eng.get(`/api/limits/${limit.id}`).expect(200)).body.protectionState).toBe('degraded')

    // the retest: all three in tolerance (383, 384, 387) → the function trips at 384 and the degradation clears
    const passed = await tech.created('/api/trip-tests', {
      ...base(limit.id),
      performedAt: '2026-03-02T08:45:00Z',
      channels: [
        { instrumentId: a, asFound: 383 },
        { instrumentId: b, asFound: 384 },
        { instrumentId: c, asFound: 387 },
      ],
    })
    expect(passed).toMatchObject({ passed: true, asFound: 384 })
    expect(passed.voting).toEqual({ architecture: '2oo3', required: 2, tripped: 3, acted: true })
    await tech
      .post(`/api/trip-tests/${passed.id}/signatures`, { meaning: 'performed', password: DEMO_PASSWORD })
      .expect(200)
    const after = (await eng.get(`/api/limits/${limit.id}`).expect(200)).body
    // the last full pass is the test day in Berlin (2 March); a 12-month interval falls due on 2 March 2027
    expect(after).toMatchObject({
      protectionState: 'in_service',
      lastFullPass: '2026-03-02',
      testDueDate: '2027-03-02',
    })
  })
})

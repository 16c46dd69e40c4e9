import { describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { demoActors } from '../../server/seed/demo-actors.ts'
import { seedDemoDemands } from '../../server/seed/demo-demands.ts'
import { signedIn } from './helpers/agent.ts'
import { useTestDb } from './helpers/test-db.ts'

// The demo plant's year of demands and trips and its test deferral (server/seed/demo-demands.ts), read back through
// the API as the demo people see them. The expected counts are those of the seed's own plan.

const ctx = useTestDb({ register: true })

describe('demo demands, trips and deferral', () => {
  it('holds a year of events, flags the heater trip that trips more often than assumed, and one approved deferral', async () => {
    ctx.clock.set('2026-11-20T10:00:00Z')
    await seedDemoDemands(ctx, await demoActors(ctx.db))
    const app = createApp(ctx)
    const eng = await signedIn(app, 'engineer')

    const all = (await eng.get('/api/demands?pageSize=50').expect(200)).body
    expect(all.total).toBe(9)
    const kinds = all.items.map((d: { kind: string }) => d.kind)
    expect(kinds.filter((k: string) => k === 'spurious_trip')).toHaveLength(4)
    expect(kinds.filter((k: string) => k === 'real_demand')).toHaveLength(3)
    // the newest is left for the engineer to classify
    expect(all.items[0]).toMatchObject({ kind: 'real_demand', status: 'recorded' })
    const oldest = new Date(all.items.at(-1).occurredAt).getTime()
    expect(ctx.clock.now().getTime() - oldest).toBeLessThan(365 * 86_400_000)

    // TSHH-101: three counted spurious trips in the last year against 0.2 a year assumed → flagged
    const rates = (await eng.get('/api/demands/rates').expect(200)).body
    const heater = rates.limits.find((r: { limitTag: string }) => r.limitTag === 'TSHH-101')
    expect(heater).toMatchObject({ spuriousTrips: 3, assumedSpuriousRatePerYear: 0.2, spuriousRateAboveAssumed: true })
    // commissioned in 2019: the whole year is observed, so the rate is the count (3 a year)
    expect(heater.observedSpuriousRatePerYear).toBeCloseTo(3, 6)

    // TT-101B's failure on demand (dangerous undetected) puts the heater's transmitter model above the 1.2e−6 /h its
    // sensor subsystem assumes: one failure in the model's instrument hours since the 2019 commissioning
    const failures = (await eng.get('/api/demands/failure-rates').expect(200)).body
    const ht40 = failures.groups.find((g: { model: string }) => g.model.startsWith('HT-40'))
    expect(ht40).toMatchObject({ failures: 1, failuresOnDemand: 1, verdict: 'above' })
    expect(ht40.limits.find((l: { limitTag: string }) => l.limitTag === 'TSHH-101')).toMatchObject({
      assumedLambdaDu: 1.2e-6,
      verdict: 'above',
    })
    // the walk-round finding has no channel: counted as unattributed, not given to a model
    expect(failures.unattributedFailures).toBe(1)
    const risk = (await eng.get('/api/bypass-review/risk').expect(200)).body
    const heaterRisk = risk.items.find((r: { tag: string }) => r.tag === 'TSHH-101')
    expect(heaterRisk.observedLambdaDuAbove).toEqual([expect.objectContaining({ model: ht40.model })])

    // fault exposure: the single-channel trip proven 200 days ago and found tripping late 30 days ago was exposed from
    // that last pass to the retest two days after the finding: 172 days = 4 128 h (both tests at 09:00)
    const exposed = risk.items.filter((r: { faultExposureHours: number }) => r.faultExposureHours > 0)
    expect(exposed).toHaveLength(1)
    expect(exposed[0].faultExposureHours).toBeCloseTo(4128, 6)
    expect(exposed[0].faultExposures).toEqual([expect.objectContaining({ ongoing: false })])
    expect(risk.faultExposureConvention).toMatch(/last passing test/)
    // never tested functions are labelled so, counted from their 2019 commissioning
    const never = risk.items.find((r: { tag: string }) => r.tag === 'LSHH-240')
    expect(never).toMatchObject({ neverTested: true, untestedSince: '2019-05-14' })
    expect(risk.caution).toMatch(/Low demand mode only/)

    const deferrals = (await eng.get('/api/test-deferrals').expect(200)).body
    expect(deferrals.total).toBe(1)
    expect(deferrals.items[0]).toMatchObject({ status: 'approved', inForce: true, extensionDays: 28 })
  })
})

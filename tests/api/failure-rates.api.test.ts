import { describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { signedIn } from './helpers/agent.ts'
import { buildActiveHeaterTrip } from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'

// Observed λDU per device kind and model (docs/domain/observed-rates.md#failure-rates-of-device-models).
// Chi-square values from published tables: χ²(0.90; 4) = 7.779 (NIST/SEMATECH e-Handbook table 1.3.6.7.4);
// χ²(0.70; 4) = 4.878 (the 0.30 upper-tail column of the usual chi-square tables; from memory);
// χ²(0.70; 2) = −2·ln(0.3) = 2.408 and χ²(0.90; 2) = 4.605 (closed form for two degrees of freedom; NIST table).
const ctx = useTestDb()

async function crew() {
  const app = createApp(ctx)
  const [eng, approver, approver2, tech, op] = await Promise.all(
    ['engineer', 'approver', 'approver2', 'technician', 'operator'].map((w) => signedIn(app, w)),
  )
  return { app, eng, approver, approver2, tech, op }
}

describe('observed failure rates per device kind and model', () => {
  it('counts dangerous undetected failures per model, bounds them at 70 % and 90 % and flags the sensor λDU', async () => {
    ctx.clock.set('2026-06-01T00:00:00Z')
    const c = await crew()
    const team = { eng: c.eng, approvers: [c.approver, c.approver2], tech: c.tech }
    const failing = await buildActiveHeaterTrip(team, { sil: 2, model: 'QX-9 test transmitter' })
    const quiet = await buildActiveHeaterTrip(team, { sil: 2, model: 'QX-11 test transmitter' })
    expect(failing.inst.model).toBe('QX-9 test transmitter')
    // both in service from 2024-06-01: 730 days = 17 520 h to the end of the period
    for (const l of [failing.limit, quiet.limit])
      await c.eng
        .put(`/api/demands/assumptions/${l.id}`, {
          assumedDemandRatePerYear: 0.1,
          assumedSpuriousRatePerYear: 0.2,
          commissionedAt: '2024-06-01',
          reason: 'LOPA',
        })
        .expect(200)

    // a dangerous failure of the QX-9 channel found in operation, classified dangerous undetected
    const found = await c.op.created('/api/demands', {
      limitId: failing.limit.id,
      kind: 'dangerous_failure',
      instrumentId: failing.inst.id,
      occurredAt: '2026-03-10T10:00:00Z',
      description: 'Transmitter found frozen at a normal reading on a walk-round',
    })
    await c.eng
      .post(`/api/demands/${found.id}/classification`, { counts: true, dangerousUndetected: true, note: 'DU' })
      .expect(200)
    // one without a channel: counted, but not given to any model
    const loose = await c.op.created('/api/demands', {
      limitId: quiet.limit.id,
      kind: 'dangerous_failure',
      occurredAt: '2026-04-10T10:00:00Z',
      description: 'Impulse line found blocked',
    })
    await c.eng
      .post(`/api/demands/${loose.id}/classification`, { counts: true, dangerousUndetected: true, note: 'DU' })
      .expect(200)

    // the test clock runs on from its start: the period is given
    const body = (await c.eng.get('/api/demands/failure-rates').query({ to: '2026-06-01T00:00:00Z' }).expect(200)).body
    const group = (model: string) => body.groups.find((g: { model: string }) => g.model === model)
    const hot = group('QX-9 test transmitter')
    expect(hot).toMatchObject({
      deviceKind: 'limit_controller',
      instrumentTags: [failing.inst.tag],
      failures: 1,
      failuresInOperation: 1,
      failuresAtTests: 0,
      failuresOnDemand: 0,
      verdict: 'above',
    })
    expect(hot.exposureHours).toBeCloseTo(17_520, 6)
    expect(hot.pointEstimate).toBeCloseTo(1 / 17_520, 12)
    expect(hot.upper90 / (7.779 / (2 * 17_520))).toBeCloseTo(1, 3)
    expect(hot.upper70 / (4.878 / (2 * 17_520))).toBeCloseTo(1, 3)
    // the factory's sensor subsystem assumes λDU = 5e−7 /h: far below the observed bound
    expect(hot.limits).toEqual([
      expect.objectContaining({ limitId: failing.limit.id, assumedLambdaDu: 5e-7, verdict: 'above' }),
    ])

    // no failure in 17 520 h: the zero-failure bound 2.408/(2T) is still above 5e−7, so the experience does not yet
    // support the assumption; shown, but not flagged as a rate above the assumption
    const calm = group('QX-11 test transmitter')
    expect(calm).toMatchObject({ failures: 0, verdict: 'not_enough_experience' })
    expect(calm.upper70 / (2.408 / (2 * 17_520))).toBeCloseTo(1, 3)
    expect(calm.upper90 / (4.605 / (2 * 17_520))).toBeCloseTo(1, 3)
    expect(body.unattributedFailures).toBe(1)
    expect(body.note).toMatch(/Low demand mode only/)
    // the flagged model sorts first
    expect(body.groups[0].verdict).toBe('above')

    // the flag offers a change request with the new figure; the limit itself does not change
    const propose = (limitId: number, model: string) =>
      c.eng.post('/api/demands/failure-rates/change-request', { limitId, deviceKind: 'limit_controller', model })
    await c.op
      .post('/api/demands/failure-rates/change-request', {
        limitId: failing.limit.id,
        deviceKind: 'limit_controller',
        model: 'QX-9 test transmitter',
      })
      .expect(403)
    await propose(quiet.limit.id, 'QX-11 test transmitter').expect(409)
    await propose(quiet.limit.id, 'QX-9 test transmitter').expect(404)
    await c.eng.post('/api/demands/failure-rates/change-request', { limitId: 'x' }).expect(400)
    const proposal = (await propose(failing.limit.id, 'QX-9 test transmitter').expect(201)).body
    // the 70 % bound at the clock's time, rounded up to two significant digits: 4.878/(2·17 520 h) = 1.392e−4 → 1.4e−4
    expect(proposal.proposedLambdaDu).toBe(1.4e-4)
    const cr = (await c.eng.get(`/api/change-requests/${proposal.changeRequestId}`).expect(200)).body
    expect(cr.status).toBe('draft')
    expect(cr.rationale).toMatch(/QX-9 test transmitter/)
    const sensorTo = cr.items[0].changes.subsystems.to.find((s: { role: string }) => s.role === 'sensor')
    const sensorFrom = cr.items[0].changes.subsystems.from.find((s: { role: string }) => s.role === 'sensor')
    expect([sensorFrom.lambdaDu, sensorTo.lambdaDu]).toEqual([5e-7, 1.4e-4])
    const still = (await c.eng.get(`/api/limits/${failing.limit.id}`).expect(200)).body
    expect(still.subsystems.find((s: { role: string }) => s.role === 'sensor').lambdaDu).toBe(5e-7)

    // a period that ends before the failure: nothing found, exposure to the end of that period only
    const before = (await c.eng.get('/api/demands/failure-rates').query({ to: '2025-06-01T00:00:00Z' }).expect(200))
      .body
    const early = before.groups.find((g: { model: string }) => g.model === 'QX-9 test transmitter')
    expect(early).toMatchObject({ failures: 0 })
    expect(early.exposureHours).toBeCloseTo(8_760, 6)

    // bad input is refused with a 400
    await c.eng.get('/api/demands/failure-rates').query({ from: 'yesterday' }).expect(400)
    await c.eng
      .get('/api/demands/failure-rates')
      .query({ from: '2026-01-01T00:00:00Z', to: '2025-01-01T00:00:00Z' })
      .expect(400)
  })
})

import { describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { signedInAs } from './helpers/agent.ts'
import { buildHeaterTrip, mvSourceTest } from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'
import { activateLimit } from './helpers/workflows.ts'

const ctx = useTestDb()
const PW = 'limitkeeper-demo'

describe('trip tests: a failed test degrades the limit until a full retest passes', () => {
  it('records, signs, degrades, records measures, and clears on a passing retest', async () => {
    ctx.clock.set('2026-03-10T09:00:00Z')
    const app = createApp(ctx)
    const { eng, approver, tech, sup } = await signedInAs(app, {
      eng: 'engineer',
      approver: 'approver',
      tech: 'technician',
      sup: 'supervisor',
    })
    const { limit } = await buildHeaterTrip(eng)
    await activateLimit({ eng, approver, tech }, limit)
    expect((await eng.get(`/api/limits/${limit.id}`).expect(200)).body.testStatus).toBe('never_tested')

    // tolerance: default ±0.5 % of the 0–1200 °C span = ±6 °C (docs/trip-tests.md#judging-a-test)
    const base = mvSourceTest(limit.id, {
      calibratorDueDate: '2026-06-30',
      performedAt: '2026-03-10T08:30:00Z',
      finalElementOk: true,
      latchHeld: true,
    })
    const pastDue = await tech
      .post('/api/trip-tests', { ...base, calibratorDueDate: '2026-03-01', asFound: 781 })
      .expect(400)
    expect(pastDue.body.error.details.fields.calibratorDueDate[0]).toContain('past its calibration due date')
    await eng.post('/api/trip-tests', { ...base, asFound: 781 }).expect(403)

    // as found in signal units, mV-source mode with the cold junction at 25 °C: E(800 °C) − E(25 °C) = 33.2754 − 1.0002 mV
    // (ITS-90 type K, NIST SRD 60) → it tripped at 800 °C, 20 °C late
    const failed = await tech.created('/api/trip-tests', { ...base, asFoundSignal: { value: 32.2752, unit: 'mV' } })
    expect(failed.asFound).toBeCloseTo(800, 1)
    expect(failed).toMatchObject({ asFoundResult: 'out_dangerous', passed: false, status: 'recorded', toleranceEu: 6 })
    await approver.post(`/api/trip-tests/${failed.id}/signatures`, { meaning: 'witnessed', password: PW }).expect(409)
    await tech.post(`/api/trip-tests/${failed.id}/signatures`, { meaning: 'performed', password: PW }).expect(200)
    const degraded = (await eng.get(`/api/limits/${limit.id}`).expect(200)).body
    expect(degraded.protectionState).toBe('degraded')
    await tech.put(`/api/trip-tests/${failed.id}`, { ...base, asFound: 781 }).expect(409)

    // the compensating measures and repair deadline are signed by the shift supervisor, not the technician
    const signed = { compensatingMeasures: ['Hourly local reading of TI'], repairDeadline: '2026-03-12', password: PW }
    await tech.post(`/api/limits/${limit.id}/degradation`, signed).expect(403)
    const measures = (await sup.post(`/api/limits/${limit.id}/degradation`, signed).expect(200)).body
    expect(measures.items[0].measuresSignedBy).toBe('Hedda Marlowe')

    // a passing partial test does not clear it; a passing full test does
    ctx.clock.set('2026-03-11T10:00:00Z')
    // a day later: sessions have ended (idle timeout), everyone signs in again
    for (const [agent, who] of [
      [eng, 'engineer'],
      [tech, 'technician'],
      [sup, 'supervisor'],
    ] as const) {
      await agent.refreshCsrf()
      await agent.signIn(`${who}@fernhollow.example`)
    }
    const partial = await tech.created('/api/trip-tests', {
      ...base,
      kind: 'partial',
      performedAt: '2026-03-11T09:00:00Z',
      asFound: 780,
    })
    await tech.post(`/api/trip-tests/${partial.id}/signatures`, { meaning: 'performed', password: PW }).expect(200)
    expect((await eng.get(`/api/limits/${limit.id}`).expect(200)).body.protectionState).toBe('degraded')
    const retest = await tech.created('/api/trip-tests', { ...base, performedAt: '2026-03-11T09:30:00Z', asFound: 781 })
    expect(retest.passed).toBe(true)
    await tech.post(`/api/trip-tests/${retest.id}/signatures`, { meaning: 'performed', password: PW }).expect(200)
    const cleared = (await eng.get(`/api/limits/${limit.id}`).expect(200)).body
    expect(cleared.protectionState).toBe('in_service')
    expect(cleared.testStatus).toBe('ok')
    expect(cleared.testDueDate).toBe('2027-03-11')
    await tech
      .post(`/api/trip-tests/${retest.id}/signatures`, { meaning: 'returned_to_service', password: PW })
      .expect(200)
    await sup.post(`/api/trip-tests/${retest.id}/signatures`, { meaning: 'accepted', password: PW }).expect(200)

    const cert = await tech.get(`/api/trip-tests/${retest.id}/certificate`).expect(200)
    expect(cert.body.subarray(0, 5).toString()).toBe('%PDF-')
    const csv = await tech.get(`/api/trip-tests/export?limitId=${limit.id}`).expect(200)
    expect(csv.text.split('\n').length).toBe(4)

    // OWASP "CSV Injection": the recorder's name starting with - + @ leaves with a quote before it
    const me = (await tech.get('/api/session').expect(200)).body.user.id as number
    await ctx.db.updateTable('app_user').set({ display_name: '-2+3+cmd|calc' }).where('id', '=', me).execute()
    const rows = (await tech.get(`/api/trip-tests/export?limitId=${limit.id}`).expect(200)).text.trim().split(/\r?\n/)
    expect(rows.slice(1).every((r) => r.endsWith(`"'-2+3+cmd|calc"`))).toBe(true)
  })
})

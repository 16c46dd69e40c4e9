import { describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { type ApiAgent, signedInAs } from './helpers/agent.ts'
import { buildHeaterTrip, rowCounts, submitChange } from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'

// Blind read-back at implementation (docs/change-requests.md#implementation-and-read-back): the technician enters
// what the device holds, the server compares it with the approved values as exact decimals, and reads back the
// alarm priority and the enabled state of alarms and alerts as well as the changed fields.

const ctx = useTestDb()
const PW = 'limitkeeper-demo'

/** A proposed high alarm at 700 °C on a new heater instrument: severity moderate, 15 min to respond. */
async function buildHeaterAlarm(eng: ApiAgent) {
  const { site, proc, inst } = await buildHeaterTrip(eng)
  const limit = await eng.created('/api/limits', {
    processId: proc.id,
    instrumentIds: [inst.id],
    tag: `TAH-${inst.tag}`,
    direction: 'high',
    limitClass: 'alarm',
    setpoint: 700,
    deadband: 2,
    severity: 'moderate',
    responseTimeMin: 15,
    operatorResponse: 'Reduce the firing rate',
    testIntervalMonths: 12,
  })
  return { site, limit }
}

async function approvedRequest(
  eng: ApiAgent,
  approver: ApiAgent,
  siteId: number,
  item: Record<string, unknown>,
): Promise<{ id: number; items: { id: number; deviceFields: string[]; readBackExpected: unknown }[] }> {
  const cr = await submitChange(eng, { siteId, title: 'Heater alarm', items: [item] })
  return (await approver.post(`/api/change-requests/${cr.id}/approvals`, { password: PW }).expect(200)).body
}

/** The technician implements the request's first item, signing what they read back from the device. */
function implementFirstItem(tech: ApiAgent, cr: { id: number; items: { id: number }[] }, readBack: unknown) {
  return tech.post(`/api/change-requests/${cr.id}/implementations`, { itemId: cr.items[0].id, readBack, password: PW })
}

describe('blind read-back', () => {
  it('reads back the priority and enabled state of an alarm and compares setpoints as exact decimals', async () => {
    const app = createApp(ctx)
    const { eng, approver, tech } = await signedInAs(app, { eng: 'engineer', approver: 'approver', tech: 'technician' })
    const { site, limit } = await buildHeaterAlarm(eng)
    // Default priority matrix of the site policy (docs/domain/alarm-classification.md, common practice): moderate
    // severity with 10 to < 30 min to respond is "low".
    expect(limit.priority).toBe('low')

    const cr = await approvedRequest(eng, approver, site.id, { kind: 'create', limitId: limit.id })
    const item = cr.items[0]
    expect(item.deviceFields).toEqual(
      expect.arrayContaining(['setpoint', 'deadband', 'latching', 'priority', 'enabled']),
    )
    expect(item.readBackExpected).toEqual({ priority: 'low', enabled: true })

    const full = {
      setpoint: '700.000',
      deadband: '2',
      deadbandUnit: 'eu',
      onDelaySec: '0',
      offDelaySec: '0',
      latching: false,
      priority: 'low',
      enabled: true,
    }
    const before = await rowCounts(ctx.db)

    // the check answers each field beside its approved value and writes nothing
    const good = (
      await tech.post(`/api/change-requests/${cr.id}/read-back-checks`, { itemId: item.id, readBack: full }).expect(200)
    ).body
    expect(good.equal).toBe(true)
    expect(good.fields.find((f: { field: string }) => f.field === 'setpoint')).toEqual({
      field: 'setpoint',
      entered: '700.000',
      approved: 700,
      equal: true,
    })

    // 700.0000000000000001 is not 700, though it is as a binary floating-point number (IEEE 754 double: 53 bits)
    const close = (
      await tech
        .post(`/api/change-requests/${cr.id}/read-back-checks`, {
          itemId: item.id,
          readBack: { ...full, setpoint: '700.0000000000000001', priority: 'high', enabled: false },
        })
        .expect(200)
    ).body
    expect(close.equal).toBe(false)
    const wrong = Object.fromEntries(
      close.fields
        .filter((f: { equal: boolean }) => !f.equal)
        .map((f: { field: string; approved: unknown }) => [f.field, f.approved]),
    )
    expect(wrong).toEqual({ setpoint: 700, priority: 'low', enabled: true })
    expect(await rowCounts(ctx.db)).toEqual(before)

    // implementation refuses a read-back without the priority, or with the alarm suppressed on the device
    const { priority: _p, ...noPriority } = full
    const missing = await implementFirstItem(tech, cr, noPriority).expect(422)
    expect(Object.keys(missing.body.error.details.fields)).toEqual(['readBack.priority'])
    const suppressed = await implementFirstItem(tech, cr, { ...full, enabled: false }).expect(422)
    expect(suppressed.body.error.details.fields['readBack.enabled'][0]).toContain('true')
    const inexact = await implementFirstItem(tech, cr, { ...full, setpoint: '700.0000000000000001' }).expect(422)
    expect(Object.keys(inexact.body.error.details.fields)).toEqual(['readBack.setpoint'])
    expect((await eng.get(`/api/limits/${limit.id}`).expect(200)).body.status).toBe('proposed')

    const done = (await implementFirstItem(tech, cr, full).expect(200)).body
    expect(done.status).toBe('implemented')
    expect(done.items[0].readBack).toMatchObject({ priority: 'low', enabled: true, setpoint: '700.000' })

    // a change of the response time alone moves the priority: the device's priority is read back, nothing else
    const cr2 = await approvedRequest(eng, approver, site.id, {
      kind: 'modify',
      limitId: limit.id,
      changes: { responseTimeMin: 5 },
    })
    // default matrix: moderate severity with 3 to < 10 min to respond is "medium"
    expect(cr2.items[0].deviceFields).toEqual(['priority', 'enabled'])
    expect(cr2.items[0].readBackExpected).toEqual({ priority: 'medium', enabled: true })
    await implementFirstItem(tech, cr2, { priority: 'low', enabled: true }).expect(422)
    await implementFirstItem(tech, cr2, { priority: 'medium', enabled: true }).expect(200)
    expect((await eng.get(`/api/limits/${limit.id}`).expect(200)).body.priority).toBe('medium')
  })

  it('reads back no priority for a trip, and answers the check only to whoever may implement', async () => {
    const app = createApp(ctx)
    const { eng, approver, tech } = await signedInAs(app, { eng: 'engineer', approver: 'approver', tech: 'technician' })
    const { site, limit } = await buildHeaterTrip(eng)
    const cr = await approvedRequest(eng, approver, site.id, { kind: 'create', limitId: limit.id })
    expect(cr.items[0].readBackExpected).toBeNull()
    expect(cr.items[0].deviceFields).not.toContain('priority')
    expect(cr.items[0].deviceFields).not.toContain('enabled')

    const url = `/api/change-requests/${cr.id}/read-back-checks`
    const body = { itemId: cr.items[0].id, readBack: { setpoint: 780 } }
    expect((await approver.post(url, body).expect(403)).body.error.code).toBe('FORBIDDEN')
    expect((await eng.post(url, body).expect(403)).body.error.code).toBe('FORBIDDEN')
    await tech.post(url, { itemId: 'one', readBack: {} }).expect(400)
    await tech.post(url, { itemId: cr.items[0].id, readBack: 'setpoint 780' }).expect(400)
    await tech.post(url, { itemId: 999999, readBack: {} }).expect(404)
    await tech.post(`/api/change-requests/999999/read-back-checks`, body).expect(404)
    const partial = (await tech.post(url, body).expect(200)).body
    expect(partial.equal).toBe(false)
    expect(partial.fields.find((f: { field: string }) => f.field === 'deadband')).toMatchObject({
      entered: null,
      approved: 5,
      equal: false,
    })
  })
})

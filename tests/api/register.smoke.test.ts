import { describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { signedIn } from './helpers/agent.ts'
import { heaterThermocouple } from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'

const ctx = useTestDb()

describe('register: a limit from process to operating window', () => {
  it('creates a process, a thermocouple instrument and a high trip, and refuses a trip inside the normal range', async () => {
    const app = createApp(ctx)
    const eng = await signedIn(app, 'engineer')
    const area = (await eng.get('/api/areas').expect(200)).body.items[0]
    const proc = await eng.created('/api/processes', {
      areaId: area.id,
      name: 'Test heater H-900',
      description: 'fired heater',
    })
    const inst = await eng.created('/api/instruments', heaterThermocouple(proc.id, 'TT-9001'))
    const base = {
      processId: proc.id,
      instrumentIds: [inst.id],
      direction: 'high',
      limitClass: 'trip',
      deadband: 5,
      severity: 'severe',
      testIntervalMonths: 12,
      latching: true,
      resetRole: 'operator',
    }
    const bad = await eng.post('/api/limits', { ...base, tag: 'TSHH-9001', setpoint: 600 }).expect(422)
    expect(bad.body.error.details.operatingWindow.errors.map((e: { code: string }) => e.code)).toContain(
      'SETPOINT_NOT_BEYOND_NORMAL',
    )
    const ok = await eng.created('/api/limits', { ...base, tag: 'TSHH-9001', setpoint: 780 })
    expect(ok.status).toBe('proposed')
    expect(ok.operatingWindow.errors).toEqual([])
    const list = (await eng.get('/api/limits?q=tshh-9001').expect(200)).body
    expect(list.items.map((l: { tag: string }) => l.tag)).toEqual(['TSHH-9001'])
    const signal = (await eng.get(`/api/limits/${ok.id}/test-signal?coldJunction=25`).expect(200)).body
    expect(signal.unit).toBe('mV')
    await eng.get(`/api/limits/${ok.id}/test-signal`).expect(400)
  })
})

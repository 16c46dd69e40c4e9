import type { ApiAgent } from './agent.ts'

let seq = 0
const next = () => `${process.pid % 1000}-${++seq}`

/** A process, a type K thermocouple instrument (0–1200 °C, normal 300–650) and a proposed high trip at 780 °C, via the API as an engineer. */
export async function buildHeaterTrip(eng: ApiAgent, opts: { siteCode?: string, sil?: 1 | 2 | 3 | null, setpoint?: number } = {}) {
  const sites = (await eng.get('/api/sites').expect(200)).body.items as { id: number, code: string }[]
  const site = sites.find((s) => s.code === (opts.siteCode ?? 'FHR'))!
  const area = ((await eng.get(`/api/areas?siteId=${site.id}`).expect(200)).body.items as { id: number }[])[0]
  const n = next()
  const proc = (await eng.post('/api/processes', { areaId: area.id, name: `Fixture heater H-${n}`, description: 'fired heater' }).expect(201)).body
  const inst = (await eng.post('/api/instruments', {
    processId: proc.id, tag: `TT-${n}`, measuredVariable: 'temperature', unit: '°C', rangeLow: 0, rangeHigh: 1200, normalLow: 300, normalHigh: 650,
    designLow: null, designHigh: 900, burnout: 'upscale', signal: { kind: 'thermocouple', tcType: 'K', headTransmitter: false }, deviceKind: 'limit_controller',
  }).expect(201)).body
  const sil = opts.sil ?? null
  const subsystems = sil ? [
    { role: 'sensor', architecture: '1oo1', lambdaDu: 5e-7, beta: 0.05, mttrHours: 8, testIntervalMonths: 12, testCoverage: 0.9, missionTimeYears: 15 },
    { role: 'logic', architecture: '1oo1', lambdaDu: 1e-8, beta: 0.02, mttrHours: 8, testIntervalMonths: 12, testCoverage: 1, missionTimeYears: 15 },
    { role: 'final_element', architecture: '1oo2', lambdaDu: 2e-6, beta: 0.1, mttrHours: 24, testIntervalMonths: 12, testCoverage: 0.7, missionTimeYears: 15 },
  ] : []
  const limit = (await eng.post('/api/limits', {
    processId: proc.id, instrumentIds: [inst.id], tag: `TSHH-${n}`, direction: 'high', limitClass: 'trip', setpoint: opts.setpoint ?? 780, deadband: 5,
    severity: 'severe', testIntervalMonths: 12, latching: true, resetRole: 'operator', sil, subsystems, compensatingMeasures: ['Operator watches TI locally every 15 min'],
    maxBypassHours: 8, bypassPermitted: true,
  }).expect(201)).body
  return { site, area, proc, inst, limit }
}

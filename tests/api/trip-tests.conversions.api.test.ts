import type { Express } from 'express'
import { beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { type ApiAgent, signedIn, siteIdByCode } from './helpers/agent.ts'
import { useTestDb } from './helpers/test-db.ts'
import { activateLimit } from './helpers/workflows.ts'
import { countRows } from './helpers/factories.ts'

// The server converts an as-found reading in signal units into engineering units before judging it. Each check names
// the published value it compares with (IEC 60751, the 4–20 mA scaling relations, NIST SRD 60 ITS-90 tables).

const ctx = useTestDb()
let app: Express
let eng: ApiAgent
let approver: ApiAgent
let tech: ApiAgent
let area = 0
let n = 0

/** An active high (or low) trip on an instrument with the given signal, through the API and a change request. */
async function activeTrip(
  inst: Record<string, unknown>,
  limit: { setpoint: number; direction?: 'high' | 'low'; deadband?: number },
) {
  n += 1
  const proc = await eng.created('/api/processes', { areaId: area, name: `Conversion check ${n}`, description: '' })
  const instrument = await eng.created('/api/instruments', {
    processId: proc.id,
    tag: `CONV-${n}`,
    burnout: 'none',
    deviceKind: 'safety_plc',
    normalLow: null,
    normalHigh: null,
    designLow: null,
    designHigh: null,
    ...inst,
  })
  const created = await eng.created('/api/limits', {
    processId: proc.id,
    instrumentIds: [instrument.id],
    tag: `CONV-TRIP-${n}`,
    direction: limit.direction ?? 'high',
    limitClass: 'trip',
    setpoint: limit.setpoint,
    deadband: limit.deadband ?? 1,
    severity: 'major',
    testIntervalMonths: 12,
    latching: false,
    compensatingMeasures: ['Local reading'],
  })
  await activateLimit({ eng, approver, tech }, created)
  return created.id as number
}

/** Records a test whose as-found is given in signal units; answers the record (nothing is signed). */
/** The body of a full test by injection at the sensor whose as-found reading is in signal units (calibrator CAL-3). */
function signalReading(limitId: number, value: number, unit: string, extra: Record<string, unknown> = {}) {
  return {
    limitId,
    kind: 'full',
    method: 'injection',
    injectionPoint: 'sensor',
    calibratorId: 'CAL-3',
    calibratorDueDate: '2026-12-31',
    performedAt: '2026-05-04T08:00:00Z',
    asFoundSignal: { value, unit },
    ...extra,
  }
}

async function asFoundFrom(
  limitId: number,
  value: number,
  unit: 'mA' | 'mV' | 'ohm' | 'V',
  extra: Record<string, unknown> = {},
) {
  return (await tech.created(
    '/api/trip-tests',
    signalReading(limitId, value, unit, { finalElementOk: true, ...extra }),
  )) as {
    asFound: number
    asFoundResult: string
    asFoundSignal: { value: number; unit: string }
    toleranceEu: number
    passed: boolean
  }
}

beforeAll(async () => {
  ctx.clock.set('2026-05-04T09:00:00Z')
  app = createApp(ctx)
  eng = await signedIn(app, 'engineer')
  approver = await signedIn(app, 'approver')
  tech = await signedIn(app, 'technician')
  const fhr = await siteIdByCode(eng, 'FHR')
  area = ((await eng.get(`/api/areas?siteId=${fhr}`).expect(200)).body.items as { id: number }[])[0].id
})

describe('platinum RTD readings (IEC 60751, Callendar–Van Dusen table)', () => {
  const pt = (element: 'Pt100' | 'Pt1000', rangeLow: number, rangeHigh: number) => ({
    measuredVariable: 'temperature',
    unit: '°C',
    rangeLow,
    rangeHigh,
    signal: { kind: 'rtd', element, wires: 4, headTransmitter: false },
  })

  it('Pt100 at 200 °C: the test signal is 175.86 Ω and 175.8560 Ω reads back as 200.000 °C', async () => {
    const id = await activeTrip(pt('Pt100', 0, 400), { setpoint: 200 })
    // rtd.md check table: 200 °C → 175.8560 Ω (agrees with IEC 60751 Table 1 to the printed 0.01 Ω); ohm rounded to 0.01
    const signal = (await tech.get(`/api/limits/${id}/test-signal`).expect(200)).body
    expect(signal).toMatchObject({ unit: 'ohm', value: 175.86 })
    // rtd.md inverse check: 175.856 Ω → 200.000 °C
    const t = await asFoundFrom(id, 175.856, 'ohm')
    expect(t.asFound).toBeCloseTo(200, 3)
    expect(t.asFoundSignal).toEqual({ value: 175.856, unit: 'ohm' })
    expect(t.asFoundResult).toBe('in_tolerance')
    // rtd.md: 250 °C → 194.0981 Ω: 50 °C above a 200 °C high trip is out on the dangerous side (tolerance ±2 °C = 0.5 % of 400 °C)
    const late = await asFoundFrom(id, 194.0981, 'ohm')
    expect(late.asFound).toBeCloseTo(250, 3)
    expect(late).toMatchObject({ asFoundResult: 'out_dangerous', toleranceEu: 2, passed: false })
  })

  it('Pt100 below 0 °C (the C term, Newton inversion): 60.2558 Ω reads −100.000 °C', async () => {
    const id = await activeTrip(pt('Pt100', -200, 100), { setpoint: -100, direction: 'low' })
    // rtd.md inverse check: 60.2558 Ω → −100.000 °C (the quadratic alone would give −100.208 °C)
    const t = await asFoundFrom(id, 60.2558, 'ohm')
    expect(t.asFound).toBeCloseTo(-100, 3)
    expect(t.asFoundResult).toBe('in_tolerance')
    // rtd.md table: −50 °C → 80.3063 Ω
    expect((await asFoundFrom(id, 80.3063, 'ohm')).asFound).toBeCloseTo(-50, 3)
  })

  it('Pt1000: 1385.055 Ω reads 100.000 °C (exactly ten times the Pt100 resistance)', async () => {
    const id = await activeTrip(pt('Pt1000', 0, 200), { setpoint: 100 })
    // rtd.md inverse check: Pt1000 1385.055 Ω → 100.000 °C; table 100 °C → 1385.055 Ω
    expect((await asFoundFrom(id, 1385.055, 'ohm')).asFound).toBeCloseTo(100, 3)
    // the signal is rounded to 0.01 Ω; 1385.055 lies on the rounding edge, so compare within the table's printed 0.01 Ω
    const signal = (await tech.get(`/api/limits/${id}/test-signal`).expect(200)).body
    expect(signal.unit).toBe('ohm')
    expect(Math.abs(signal.value - 1385.055)).toBeLessThanOrEqual(0.005 + 1e-9)
  })
})

describe('4–20 mA readings (linear and square-root scaling; NAMUR NE 43 bands)', () => {
  const loop = (unit: string, rangeLow: number, rangeHigh: number, sqrtExtraction = false, variable = 'pressure') => ({
    measuredVariable: variable,
    unit,
    rangeLow,
    rangeHigh,
    ...(variable === 'pressure' ? { pressureReference: 'gauge' } : {}),
    signal: { kind: 'current', sqrtExtraction },
  })

  it('0 … 10 bar: 5 bar is 12.000 mA (3.000 V across 250 Ω); 12.0 mA and 3.0 V both read back as 5.000 bar', async () => {
    const id = await activeTrip(loop('bar', 0, 10), { setpoint: 5 })
    // analog-signals.md: I = 4 + 16·(PV − LRV)/(URV − LRV); 12 mA → 3.000 V across 250 Ω
    const signal = (await tech.get(`/api/limits/${id}/test-signal`).expect(200)).body
    expect(signal).toMatchObject({ unit: 'mA', value: 12 })
    expect(signal.alternatives).toContainEqual({ label: 'Voltage across 250 Ω', unit: 'V', value: 3 })
    // analog-signals.md linear table: 12.0 mA on 0 … 10 bar → 5.000 bar
    expect((await asFoundFrom(id, 12, 'mA')).asFound).toBeCloseTo(5, 6)
    expect((await asFoundFrom(id, 3, 'V')).asFound).toBeCloseTo(5, 6)
    // analog-signals.md: 8.0 mA is 25 % of span → 2.5 bar, tripping early: out on the safe side
    const early = await asFoundFrom(id, 8, 'mA')
    expect(early.asFound).toBeCloseTo(2.5, 6)
    expect(early.asFoundResult).toBe('out_safe')
  })

  it('matches the other published linear rows (0 … 600 kPa, 0 … 250 °C, −50 … 150 °C including NE 43 under-range)', async () => {
    // analog-signals.md: 13.6 mA on 0 … 600 kPa → 360.0 kPa
    const kpa = await activeTrip(loop('kPa', 0, 600), { setpoint: 360 })
    expect((await asFoundFrom(kpa, 13.6, 'mA')).asFound).toBeCloseTo(360, 6)
    // analog-signals.md: 7.2 mA on 0 … 250 °C → 50.000 °C
    const warm = await activeTrip(loop('°C', 0, 250, false, 'temperature'), { setpoint: 50 })
    expect((await asFoundFrom(warm, 7.2, 'mA')).asFound).toBeCloseTo(50, 6)
    // analog-signals.md: 3.8 mA on −50 … 150 °C → −52.500 °C (−1.25 %, NE 43 measurement band); 20.5 mA → 156.250 °C
    const cold = await activeTrip(loop('°C', -50, 150, false, 'temperature'), { setpoint: -20, direction: 'low' })
    expect((await asFoundFrom(cold, 3.8, 'mA')).asFound).toBeCloseTo(-52.5, 6)
    expect((await asFoundFrom(cold, 20.5, 'mA')).asFound).toBeCloseTo(156.25, 6)
    // analog-signals.md inverse table: −20 on −50 … 150 → 6.400 mA
    expect((await tech.get(`/api/limits/${cold}/test-signal`).expect(200)).body).toMatchObject({
      unit: 'mA',
      value: 6.4,
    })
  })

  it('square-root extraction (DP flow): 12.00 mA is 70.711 % of maximum flow, 8.00 mA 50.000 %', async () => {
    const id = await activeTrip(loop('m³/h', 0, 100, true, 'flow'), { setpoint: 50, direction: 'low' })
    // analog-signals.md square-root table: 8.00 mA → 50.000 %, 12.00 mA → 70.711 %, 16.00 mA → 86.603 %; I = 4 + 16·(Q/Qmax)²
    expect((await tech.get(`/api/limits/${id}/test-signal`).expect(200)).body).toMatchObject({ unit: 'mA', value: 8 })
    expect((await asFoundFrom(id, 8, 'mA')).asFound).toBeCloseTo(50, 3)
    expect((await asFoundFrom(id, 12, 'mA')).asFound).toBeCloseTo(70.711, 3)
    expect((await asFoundFrom(id, 16, 'mA')).asFound).toBeCloseTo(86.603, 3)
  })

  it('refuses a reading in a unit the instrument has no signal in (422), writing nothing', async () => {
    const id = await activeTrip(loop('bar', 0, 10), { setpoint: 5 })
    const before = await countRows(ctx.db, 'trip_test')
    const res = await tech.post('/api/trip-tests', signalReading(id, 100, 'ohm')).expect(422)
    expect(res.body.error.details.fields.asFoundSignal).toHaveLength(1)
    expect(await countRows(ctx.db, 'trip_test')).toBe(before)
  })
})

describe('thermocouple readings in millivolts (ITS-90; NIST SRD 60 tables)', () => {
  it('type K at 800 °C with the terminals at 25 °C: inject 32.275 mV; the same mV reads back as 800 °C', async () => {
    const id = await activeTrip(
      {
        measuredVariable: 'temperature',
        unit: '°C',
        rangeLow: 0,
        rangeHigh: 1200,
        signal: { kind: 'thermocouple', tcType: 'K', headTransmitter: true },
      },
      { setpoint: 800, deadband: 10 },
    )
    // thermocouples.md type K table: E(800 °C) = 33.2754 mV, E(25 °C) = 1.0002 mV → 32.2752 mV, rounded to 0.001 mV
    await tech.get(`/api/limits/${id}/test-signal?mode=mv_source`).expect(400)
    const signal = (await tech.get(`/api/limits/${id}/test-signal?mode=mv_source&coldJunction=25`).expect(200)).body
    expect(signal).toMatchObject({
      unit: 'mV',
      value: 32.275,
      components: { emfSetpointMv: 33.2754, emfColdJunctionMv: 1.0002, coldJunctionC: 25 },
    })
    // head transmitter, linear 0 … 1200 °C: 4 + 16·800/1200 = 14.667 mA (analog-signals.md linear formula)
    expect(signal.alternatives).toContainEqual({
      label: 'Head transmitter output (linear over the instrument range)',
      unit: 'mA',
      value: 14.667,
    })
    // in thermocouple-simulate mode the calibrator compensates: the value is the temperature itself
    expect((await tech.get(`/api/limits/${id}/test-signal?mode=tc_simulate`).expect(200)).body).toMatchObject({
      unit: 'eu',
      value: 800,
    })
    const t = await asFoundFrom(id, 32.2752, 'mV', { sourceMode: 'mv_source', coldJunctionC: 25 })
    // the inverse function's stated error band for type K is within ±0.06 °C (thermocouples.md, NIST SRD 60)
    expect(Math.abs(t.asFound - 800)).toBeLessThan(0.06)
    // the head transmitter's output is accepted as a reading too: 14.667 mA → 800 °C (to the mA rounding)
    expect((await asFoundFrom(id, 14.6667, 'mA')).asFound).toBeCloseTo(800, 1)
    // a millivolt reading needs the cold junction
    const res = await tech
      .post('/api/trip-tests', signalReading(id, 32.2752, 'mV', { sourceMode: 'mv_source' }))
      .expect(400)
    expect(res.body.error.details.fields.coldJunctionC).toHaveLength(1)
  })
})

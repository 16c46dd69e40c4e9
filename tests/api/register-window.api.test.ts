import type { Express } from 'express'
import { beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { type ApiAgent, signedIn, siteIdByCode } from './helpers/agent.ts'
import { useTestDb } from './helpers/test-db.ts'
import { rowsAndAudit, thermocoupleK } from './helpers/factories.ts'

const ctx = useTestDb()

// Every operating-window rule of shared/domain/operating-window.ts (table in docs/domain/operating-window.md), passing
// and failing through the API. The site policy is the default: trip-test tolerance ±0.5 % of span (docs/conventions.md,
// "Site policies").

interface Finding {
  code: string
  field?: string
  message: string
}

let app: Express
let eng: ApiAgent
let processId = 0
let seq = 0

/** A 0–1000 °C thermocouple instrument, normal 300–650; `over` changes any field. */
async function instrument(over: Record<string, unknown> = {}): Promise<{ id: number }> {
  return await eng.created('/api/instruments', thermocoupleK(processId, `TT-W${++seq}`, over))
}

/** A high trip at 800 °C on the instrument; `over` changes any field. */
function limit(instrumentId: number, over: Record<string, unknown> = {}) {
  return eng.post('/api/limits', {
    processId,
    instrumentIds: [instrumentId],
    tag: `TSHH-W${++seq}`,
    direction: 'high',
    limitClass: 'trip',
    setpoint: 800,
    deadband: 0,
    severity: 'major',
    testIntervalMonths: 12,
    ...over,
  })
}

const alarm = { limitClass: 'alarm', responseTimeMin: 10, severity: 'major' }
// a low trip on an upscale-burnout sensor warns (rule 8): tests of other rules on low trips record a bad-value trip

const counts = () =>
  rowsAndAudit(ctx.db, {
    limits: 'limit_function',
    limitRevisions: 'limit_revision',
    instrumentRevisions: 'instrument_revision',
  })

/** Saves a limit that must pass the rule; answers its stored warnings' codes. */
async function passes(instrumentId: number, over: Record<string, unknown>): Promise<string[]> {
  const res = await limit(instrumentId, over)
  expect(res.status, JSON.stringify(res.body)).toBe(201)
  expect(res.body.operatingWindow.errors).toEqual([])
  const stored = (await eng.get(`/api/limits/${res.body.id}`).expect(200)).body.operatingWindow
  expect(stored).toEqual(res.body.operatingWindow)
  return (stored.warnings as Finding[]).map((w) => w.code)
}

/** Sends a limit that the rule blocks: 422 naming the code, and nothing written. */
async function blocked(instrumentId: number, over: Record<string, unknown>, code: string): Promise<Finding> {
  const before = await counts()
  const res = await limit(instrumentId, over).expect(422)
  expect(res.body.error.code).toBe('UNPROCESSABLE')
  const errors = res.body.error.details.operatingWindow.errors as Finding[]
  expect(errors.map((e) => e.code)).toContain(code)
  expect(await counts()).toEqual(before)
  return errors.find((e) => e.code === code)!
}

beforeAll(async () => {
  app = createApp(ctx)
  eng = await signedIn(app, 'engineer')
  const fhr = await siteIdByCode(eng, 'FHR')
  const area = (await eng.get(`/api/areas?siteId=${fhr}`).expect(200)).body.items.find(
    (a: { name: string }) => a.name === 'Utilities',
  )
  processId = (
    await eng.created('/api/processes', { areaId: area.id, name: 'Window test heater H-W', description: '' })
  ).id
})

describe('operating window through the API: errors block saving (422), warnings are stored', () => {
  it('rule 0: an empty measuring range is refused at the instrument already (400), before any limit can use it', async () => {
    const res = await eng
      .post('/api/instruments', {
        processId,
        tag: 'TT-W-EMPTY',
        measuredVariable: 'temperature',
        unit: '°C',
        rangeLow: 500,
        rangeHigh: 500,
        burnout: 'upscale',
        signal: { kind: 'thermocouple', tcType: 'K', headTransmitter: false },
        deviceKind: 'limit_controller',
      })
      .expect(400)
    expect(res.body.error.details.fields.rangeHigh).toBeDefined()
    const ok = await instrument({ rangeLow: 500, rangeHigh: 500.1, normalLow: null, normalHigh: null })
    await passes(ok.id, { setpoint: 500.05 })
  })

  it('rule 1 SETPOINT_OUTSIDE_RANGE (window nesting): the range ends are inside, one step beyond is refused', async () => {
    const i = await instrument()
    expect(await passes(i.id, { setpoint: 1000 })).toContain('SETPOINT_NEAR_RANGE_END')
    const f = await blocked(i.id, { setpoint: 1000.5 }, 'SETPOINT_OUTSIDE_RANGE')
    expect(f.field).toBe('setpoint')
    await blocked(i.id, { direction: 'low', setpoint: -1, normalLow: null }, 'SETPOINT_OUTSIDE_RANGE')
  })

  it('rule 2 SETPOINT_NEAR_RANGE_END (common practice, no standard): setpoint ± tolerance exactly 5 % of span from the end passes, closer warns', async () => {
    const i = await instrument()
    // span 1000: tolerance 5, margin 50 → keep setpoint + 5 ≤ 950
    expect(await passes(i.id, { setpoint: 945 })).toEqual([])
    expect(await passes(i.id, { setpoint: 945.5 })).toEqual(['SETPOINT_NEAR_RANGE_END'])
    const low = await instrument({ normalLow: 300 })
    expect(await passes(low.id, { direction: 'low', setpoint: 55, badValueTrip: true })).toEqual([])
    expect(await passes(low.id, { direction: 'low', setpoint: 54.5, badValueTrip: true })).toEqual([
      'SETPOINT_NEAR_RANGE_END',
    ])
  })

  it('rule 3a SETPOINT_NOT_BEYOND_NORMAL (window nesting): a high limit at normal high is refused, just above passes', async () => {
    const i = await instrument()
    const f = await blocked(i.id, { setpoint: 650 }, 'SETPOINT_NOT_BEYOND_NORMAL')
    expect(f.message).toMatch(/above normal high 650/)
    expect(await passes(i.id, { setpoint: 650.1 })).toEqual([])
    const low = await instrument()
    await blocked(low.id, { direction: 'low', setpoint: 300 }, 'SETPOINT_NOT_BEYOND_NORMAL')
    expect(await passes(low.id, { direction: 'low', setpoint: 299.9, badValueTrip: true })).toEqual([])
  })

  it('rule 3b TRIP_NOT_BEYOND_ALARM (window nesting): a high trip must lie above the high alarm on its instrument', async () => {
    const i = await instrument()
    await passes(i.id, { ...alarm, setpoint: 700 })
    await blocked(i.id, { setpoint: 700 }, 'TRIP_NOT_BEYOND_ALARM')
    expect(await passes(i.id, { setpoint: 700.5 })).toEqual([])
  })

  it('rule 3c ALARM_NOT_BEFORE_TRIP (window nesting): a high alarm must lie below the high trip on its instrument', async () => {
    const i = await instrument()
    await passes(i.id, { setpoint: 800 })
    await blocked(i.id, { ...alarm, setpoint: 800 }, 'ALARM_NOT_BEFORE_TRIP')
    expect(await passes(i.id, { ...alarm, setpoint: 799.5 })).toEqual([])
  })

  it('rule 4 DEADBAND_INTO_NORMAL (docs/conventions.md deadband convention): a return point on the normal edge passes, inside it is refused', async () => {
    const i = await instrument()
    expect(await passes(i.id, { setpoint: 700, deadband: 50 })).toEqual([])
    const f = await blocked(i.id, { setpoint: 710, deadband: 60.5 }, 'DEADBAND_INTO_NORMAL')
    expect(f.field).toBe('deadband')
    // in % of span (1000): 6 % = 60 returns at 650 exactly
    expect(await passes(i.id, { setpoint: 720, deadband: 7, deadbandUnit: 'percent_span' })).toEqual([])
    await blocked(i.id, { setpoint: 730, deadband: 8.1, deadbandUnit: 'percent_span' }, 'DEADBAND_INTO_NORMAL')
  })

  it('rule 5 DESIGN_LIMIT_OUTSIDE_RANGE (window nesting): a design limit the sensor cannot see is a warning', async () => {
    const inside = await instrument({ designHigh: 1000 })
    expect(await passes(inside.id, {})).toEqual([])
    const outside = await instrument({ designHigh: 1100 })
    expect(await passes(outside.id, {})).toEqual(['DESIGN_LIMIT_OUTSIDE_RANGE'])
  })

  it('rule 5b SETPOINT_BEYOND_DESIGN_LIMIT (window nesting): a high limit at the design high warns, below it passes', async () => {
    const i = await instrument({ designHigh: 850 })
    expect(await passes(i.id, { setpoint: 849 })).toEqual([])
    expect(await passes(i.id, { setpoint: 850 })).toEqual(['SETPOINT_BEYOND_DESIGN_LIMIT'])
  })

  it('rule 6 TRIP_TOLERANCE_BEYOND_ANALYTICAL (IEC 61511 analytical limit): trip + tolerance up to the analytical limit passes, beyond is refused', async () => {
    const i = await instrument()
    // tolerance 0.5 % of 1000 = 5
    expect(await passes(i.id, { setpoint: 800, analyticalLimit: 805 })).toEqual([])
    const f = await blocked(i.id, { setpoint: 810, analyticalLimit: 814.9 }, 'TRIP_TOLERANCE_BEYOND_ANALYTICAL')
    expect(f.message).toMatch(/815 exceeds the analytical limit 814.9/)
    const low = await instrument()
    expect(await passes(low.id, { direction: 'low', setpoint: 200, analyticalLimit: 195, badValueTrip: true })).toEqual(
      [],
    )
    await blocked(
      low.id,
      { direction: 'low', setpoint: 210, analyticalLimit: 205.1 },
      'TRIP_TOLERANCE_BEYOND_ANALYTICAL',
    )
  })

  it('rule 7 RESPONSE_EXCEEDS_SAFETY_TIME (IEC 61511 process safety time): on-delay + response time equal to the safety time passes, more is refused', async () => {
    const i = await instrument()
    expect(
      await passes(i.id, {
        ...alarm,
        setpoint: 700,
        onDelaySec: 2,
        requiredResponseTimeSec: 8,
        processSafetyTimeSec: 10,
      }),
    ).toEqual([])
    const f = await blocked(
      i.id,
      { setpoint: 800, requiredResponseTimeSec: 10.5, processSafetyTimeSec: 10 },
      'RESPONSE_EXCEEDS_SAFETY_TIME',
    )
    expect(f.field).toBe('requiredResponseTimeSec')
  })

  it('rule 8 BURNOUT_AWAY_FROM_TRIP (fail-safe on sensor failure, EN 14597 / NFPA 86): warns unless a bad-value trip is recorded', async () => {
    const down = await instrument({ burnout: 'downscale' })
    expect(await passes(down.id, { setpoint: 800 })).toEqual(['BURNOUT_AWAY_FROM_TRIP'])
    expect(await passes(down.id, { setpoint: 810, badValueTrip: true })).toEqual([])
    const up = await instrument({ burnout: 'upscale' })
    expect(await passes(up.id, { direction: 'low', setpoint: 200 })).toEqual(['BURNOUT_AWAY_FROM_TRIP'])
    // an alarm is not a trip: no warning
    expect(await passes(down.id, { ...alarm, setpoint: 700 })).toEqual([])
  })

  it('rule 9 DELAY_ON_TRIP (common practice: delays are an alarm feature, ISA-18.2): an on-delay on a trip warns, on an alarm not', async () => {
    const i = await instrument()
    expect(await passes(i.id, { setpoint: 800, onDelaySec: 1 })).toEqual(['DELAY_ON_TRIP'])
    expect(await passes(i.id, { ...alarm, setpoint: 700, onDelaySec: 5 })).toEqual([])
    expect(await passes(i.id, { setpoint: 810, onDelaySec: 0, offDelaySec: 3 })).toEqual([])
  })

  it('rule 10 DUPLICATE_SETPOINT (common practice): two limits of one class and direction at the same value are refused', async () => {
    const i = await instrument()
    await passes(i.id, { setpoint: 800 })
    await blocked(i.id, { setpoint: 800 }, 'DUPLICATE_SETPOINT')
    expect(await passes(i.id, { setpoint: 800.5 })).toEqual([])
    expect(await passes(i.id, { direction: 'low', setpoint: 200, badValueTrip: true })).toEqual([])
  })

  it('priority matrix (site policy, common practice after ISA-18.2): the alert cell refuses an alarm and says to register it as an alert; one minute less gets a priority', async () => {
    const i = await instrument()
    const f = await blocked(
      i.id,
      { ...alarm, severity: 'severe', responseTimeMin: 30, setpoint: 700 },
      'ALARM_NOT_URGENT',
    )
    expect(f.field).toBe('limitClass')
    expect(f.message).toMatch(/register it as an alert/)
    const ok = (await limit(i.id, { ...alarm, severity: 'severe', responseTimeMin: 29, setpoint: 700 }).expect(201))
      .body
    expect(ok.priority).toBe('high')
    expect(ok.priorityExplanation).toMatch(/severe/)
    // a trip acts by itself: the same cell does not block it
    expect(
      (await limit(i.id, { severity: 'severe', responseTimeMin: 30, setpoint: 800 }).expect(201)).body.priority,
    ).toBeNull()
  })
})

describe('stored window results', () => {
  it('filters the register on hasWarnings=true and hasWarnings=false', async () => {
    const i = await instrument({ designHigh: 820 })
    const warned = (await limit(i.id, { setpoint: 820 }).expect(201)).body
    const clean = (await limit(i.id, { ...alarm, setpoint: 700 }).expect(201)).body
    const ids = async (q: string) =>
      (await eng.get(`/api/limits?instrumentId=${i.id}&${q}`).expect(200)).body.items.map((l: { id: number }) => l.id)
    expect(await ids('hasWarnings=true')).toEqual([warned.id])
    expect(await ids('hasWarnings=false')).toEqual([clean.id])
    expect(await ids('hasErrors=true')).toEqual([])
  })

  it("recomputes the stored warnings of an instrument's limits in the same change, and refuses a change that would give one an error", async () => {
    const i = await instrument()
    const l = (await limit(i.id, { setpoint: 946 }).expect(201)).body
    expect(l.operatingWindow.warnings.map((w: Finding) => w.code)).toEqual(['SETPOINT_NEAR_RANGE_END'])

    await eng.patch(`/api/instruments/${i.id}`, { rangeHigh: 1100 }).expect(200)
    expect((await eng.get(`/api/limits/${l.id}`).expect(200)).body.operatingWindow.warnings).toEqual([])
    expect((await eng.get(`/api/limits?instrumentId=${i.id}&hasWarnings=true`).expect(200)).body.items).toEqual([])

    await eng.patch(`/api/instruments/${i.id}`, { burnout: 'downscale' }).expect(200)
    expect(
      (await eng.get(`/api/limits/${l.id}`).expect(200)).body.operatingWindow.warnings.map((w: Finding) => w.code),
    ).toEqual(['BURNOUT_AWAY_FROM_TRIP'])

    const before = await counts()
    const instrumentBefore = (await eng.get(`/api/instruments/${i.id}`).expect(200)).body
    const limitBefore = (await eng.get(`/api/limits/${l.id}`).expect(200)).body
    const res = await eng.patch(`/api/instruments/${i.id}`, { normalHigh: 950 }).expect(422)
    expect(res.body.error.details.limits[0].errors.map((e: Finding) => e.code)).toContain('SETPOINT_NOT_BEYOND_NORMAL')
    expect(await counts()).toEqual(before)
    expect((await eng.get(`/api/instruments/${i.id}`).expect(200)).body).toEqual(instrumentBefore)
    expect((await eng.get(`/api/limits/${l.id}`).expect(200)).body).toEqual(limitBefore)
  })

  it('refuses an edit of a draft limit that breaks its window, and keeps the stored row', async () => {
    const i = await instrument()
    const l = (await limit(i.id, { setpoint: 800 }).expect(201)).body
    const before = await counts()
    const res = await eng.patch(`/api/limits/${l.id}`, { setpoint: 600 }).expect(422)
    expect(res.body.error.details.operatingWindow.errors.map((e: Finding) => e.code)).toContain(
      'SETPOINT_NOT_BEYOND_NORMAL',
    )
    expect(await counts()).toEqual(before)
    expect((await eng.get(`/api/limits/${l.id}`).expect(200)).body).toMatchObject({ setpoint: 800, revision: 1 })
  })
})

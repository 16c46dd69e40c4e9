import type { Express } from 'express'
import { beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { type ApiAgent, signedIn, siteIdByCode } from './helpers/agent.ts'
import { rowCounts } from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'

const ctx = useTestDb()

// Classification rules of docs/domain/alarm-classification.md through the API:
// - the default matrix's last column (≥ 30 min to respond) is an alert, not an alarm (ISA-18.2-2016 separates
//   alerts from alarms; from memory), unless the site's alarm philosophy gives such alarms the lowest priority;
// - below 10 min with a major or severe consequence, a warning that operator action alone may not be credited
//   (common practice in layer-of-protection analysis; the bound is a site policy);
// - SIL 1–3 only on trips (IEC 61511); a safety-related alarm claims a risk reduction of at most 10 (IEC 61511-1
//   §9, from memory);
// - the rationalization record and the alarm response sheets (ISA-18.2 rationalization; from memory).

let app: Express
let eng: ApiAgent
let admin: ApiAgent
let fhr = 0
let smp = 0
let areaId = 0
let otherAreaId = 0
let processId = 0
let levelId = 0
let seq = 0

/** A tank level transmitter 0–100 %, normal 20–80 %. */
async function levelInstrument(onProcess = processId): Promise<number> {
  return (
    await eng.created('/api/instruments', {
      processId: onProcess,
      tag: `LT-C${++seq}`,
      measuredVariable: 'level',
      unit: '%',
      rangeLow: 0,
      rangeHigh: 100,
      normalLow: 20,
      normalHigh: 80,
      burnout: 'none',
      signal: { kind: 'current', sqrtExtraction: false },
      deviceKind: 'control_system',
    })
  ).id
}

function limit(over: Record<string, unknown>) {
  return eng.post('/api/limits', {
    processId,
    instrumentIds: [levelId],
    tag: `LAH-C${++seq}`,
    direction: 'high',
    limitClass: 'alarm',
    setpoint: 85 + (seq % 10) / 10,
    severity: 'moderate',
    responseTimeMin: 45,
    testIntervalMonths: 12,
    ...over,
  })
}

const pages = (pdf: Buffer) => (pdf.toString('latin1').match(/\/Type\s*\/Page[^s]/g) ?? []).length

beforeAll(async () => {
  app = createApp(ctx)
  eng = await signedIn(app, 'engineer')
  admin = await signedIn(app, 'admin')
  fhr = await siteIdByCode(eng, 'FHR')
  smp = await siteIdByCode(eng, 'SMP')
  const areas = (await eng.get(`/api/areas?siteId=${fhr}`).expect(200)).body.items as { id: number; name: string }[]
  areaId = areas.find((a) => a.name === 'Tank Farm')!.id
  otherAreaId = areas.find((a) => a.name === 'Utilities')!.id
  processId = (await eng.created('/api/processes', { areaId, name: 'Slop tank T-C1', description: '' })).id
  levelId = await levelInstrument()
})

describe('alarm or alert: the long end of the priority matrix', () => {
  it('refuses a slow tank-level alarm with "register it as an alert" and writes nothing', async () => {
    const before = await rowCounts(ctx.db)
    const res = await limit({}).expect(422)
    const fields = res.body.error.details.fields as Record<string, string[]>
    expect(fields.limitClass.join(' ')).toMatch(/not urgent enough for an alarm.*register it as an alert/)
    expect(JSON.stringify(res.body)).not.toMatch(/make it a trip/)
    expect(await rowCounts(ctx.db)).toEqual(before)
  })

  it('registers the same slow condition as an alert, without priority', async () => {
    const alert = (await limit({ limitClass: 'alert' }).expect(201)).body
    expect(alert.limitClass).toBe('alert')
    expect(alert.priority).toBeNull()
    expect(alert.priorityExplanation).toMatch(/alert/)
    const listed = (await eng.get(`/api/limits?limitClass=alert&instrumentId=${levelId}`).expect(200)).body
    expect(listed.items.map((l: { id: number }) => l.id)).toContain(alert.id)
  })

  it('an alert needs no time to respond', async () => {
    const alert = (await limit({ limitClass: 'alert', responseTimeMin: null, setpoint: 88 }).expect(201)).body
    expect(alert.responseTimeMin).toBeNull()
  })

  it('keeps it an alarm with the lowest priority where the site philosophy says so, and the site names it', async () => {
    const policy = (await admin.get(`/api/sites/${smp}`).expect(200)).body.policy
    await admin
      .patch(`/api/sites/${smp}`, {
        policy: {
          alarmPhilosophy: {
            ...policy.alarmPhilosophy,
            longResponseAs: 'lowest_priority',
            priorities: { ...policy.alarmPhilosophy.priorities, low: { label: 'Advisory', color: '#607d8b' } },
          },
        },
      })
      .expect(200)
    const smpArea = (await eng.get(`/api/areas?siteId=${smp}`).expect(200)).body.items[0].id
    const smpProcess = (await eng.created('/api/processes', { areaId: smpArea, name: 'Slow tank', description: '' })).id
    const lt = await levelInstrument(smpProcess)
    const res = await limit({ processId: smpProcess, instrumentIds: [lt], tag: 'LAH-C-SMP' }).expect(201)
    expect(res.body.priority).toBe('low')
    expect(res.body.priorityExplanation).toMatch(/lowest priority/)
    const site = (await eng.get(`/api/sites/${smp}`).expect(200)).body
    expect(site.policy.alarmPhilosophy.priorities.low).toEqual({ label: 'Advisory', color: '#607d8b' })
  })

  it('refuses a priority colour that is neither a theme colour nor #rrggbb (400)', async () => {
    const policy = (await admin.get(`/api/sites/${fhr}`).expect(200)).body.policy
    const res = await admin
      .patch(`/api/sites/${fhr}`, {
        policy: {
          alarmPhilosophy: {
            ...policy.alarmPhilosophy,
            priorities: { ...policy.alarmPhilosophy.priorities, high: { label: 'High', color: 'url(x)' } },
          },
        },
      })
      .expect(400)
    expect(JSON.stringify(res.body.error.details)).toMatch(/colour/)
  })
})

describe('the short end: operator action alone may not be credited', () => {
  // The warning itself is computed by classifyLimit (tests/unit/shared/priority.test.ts) for the form and the limit
  // page; it never blocks saving and is not stored among the operating-window findings.
  it('saves a major consequence with 5 min to respond, with its priority and no stored finding', async () => {
    const fast = (await limit({ severity: 'major', responseTimeMin: 5, setpoint: 90 }).expect(201)).body
    expect(fast.priority).toBe('high')
    expect(fast.operatingWindow.warnings.map((w: { code: string }) => w.code)).not.toContain('OPERATOR_TOO_SLOW')
  })
})

describe('SIL on trips only; safety-related alarms', () => {
  it('refuses a SIL on an alarm and on an alert with a field error (400), nothing written', async () => {
    const before = await rowCounts(ctx.db)
    for (const limitClass of ['alarm', 'alert']) {
      const res = await limit({ limitClass, responseTimeMin: 5, severity: 'major', sil: 2 }).expect(400)
      expect(res.body.error.details.fields.sil.join(' ')).toMatch(/safety instrumented function \(a trip\)/)
    }
    expect(await rowCounts(ctx.db)).toEqual(before)
  })

  it('refuses a SIL added to an alarm by a later edit', async () => {
    const a = (await limit({ responseTimeMin: 5, severity: 'major', setpoint: 92 }).expect(201)).body
    const sub = (role: string) => ({
      role,
      architecture: '1oo1',
      lambdaDu: 1e-6,
      beta: 0,
      mttrHours: 8,
      testIntervalMonths: 12,
      testCoverage: 1,
      missionTimeYears: 10,
    })
    const subsystems = ['sensor', 'logic', 'final_element'].map(sub)
    const res = await eng.patch(`/api/limits/${a.id}`, { sil: 1, subsystems, revision: a.revision })
    expect(res.status, JSON.stringify(res.body)).toBe(400)
    expect(res.body.error.details.fields.sil.join(' ')).toMatch(/a trip/)
    expect((await eng.get(`/api/limits/${a.id}`).expect(200)).body).toMatchObject({ sil: null, revision: a.revision })
  })

  it('takes a safety-related alarm with a claimed risk reduction of 10, not 11, and never on a trip', async () => {
    const base = { responseTimeMin: 5, severity: 'major', safetyRelatedAlarm: true }
    const r11 = await limit({ ...base, claimedRiskReduction: 11, setpoint: 93 }).expect(400)
    expect(r11.body.error.details.fields.claimedRiskReduction.join(' ')).toMatch(/from 1 to 10/)
    const missing = await limit({ ...base, setpoint: 93 }).expect(400)
    expect(missing.body.error.details.fields.claimedRiskReduction).toBeDefined()
    const ok = (await limit({ ...base, claimedRiskReduction: 10, setpoint: 93 }).expect(201)).body
    expect(ok).toMatchObject({ safetyRelatedAlarm: true, claimedRiskReduction: 10 })
    const trip = await limit({ limitClass: 'trip', safetyRelatedAlarm: true, claimedRiskReduction: 5, setpoint: 97 })
    expect(trip.status).toBe(400)
    expect(trip.body.error.details.fields.safetyRelatedAlarm.join(' ')).toMatch(/Only an alarm/)
  })
})

describe('rationalization record and response sheets', () => {
  let alarmId = 0
  let tripId = 0

  it('keeps the rationalization fields', async () => {
    const a = (
      await limit({
        tag: 'LAH-C-RAT',
        responseTimeMin: 15,
        setpoint: 94,
        alarmType: 'rate_of_change',
        causes: 'Inlet valve XV-C1 left open after transfer',
        confirmation: 'Compare with the radar gauge LI-C2',
        consequence: 'Overflow into the bund',
        impactCategory: 'environment',
        operatorResponse: 'Close XV-C1; start the transfer pump to T-C2',
      }).expect(201)
    ).body
    alarmId = a.id
    const got = (await eng.get(`/api/limits/${a.id}`).expect(200)).body
    expect(got).toMatchObject({
      alarmType: 'rate_of_change',
      causes: 'Inlet valve XV-C1 left open after transfer',
      confirmation: 'Compare with the radar gauge LI-C2',
      impactCategory: 'environment',
    })
    const bad = await limit({ alarmType: 'fuzzy', setpoint: 95.5, responseTimeMin: 15 }).expect(400)
    expect(bad.body.error.details.fields.alarmType).toBeDefined()
  })

  it('prints one page for an alarm and refuses a trip (409)', async () => {
    const res = await eng.get(`/api/limits/${alarmId}/response-sheet`).expect(200)
    expect(res.headers['content-type']).toBe('application/pdf')
    expect(res.headers['content-disposition']).toMatch(/alarm-response-sheet-LAH-C-RAT\.pdf/)
    expect(res.body.subarray(0, 5).toString()).toBe('%PDF-')
    expect(pages(res.body)).toBe(1)
    tripId = (await limit({ limitClass: 'trip', setpoint: 98, tag: 'LSHH-C1' }).expect(201)).body.id
    const trip = await eng.get(`/api/limits/${tripId}/response-sheet`).expect(409)
    expect(trip.body.error.message).toMatch(/trip/)
  })

  it('prints a booklet of the active alarms and alerts of an area, one page each, trips left out', async () => {
    // drafts are not in service: the booklet holds active limits only
    const area = await eng.get(`/api/alarm-response-sheets?siteId=${fhr}&areaId=${areaId}`)
    expect(area.status).toBe(404)
    await ctx.db.updateTable('limit_function').set({ status: 'active' }).where('id', 'in', [alarmId, tripId]).execute()
    const booklet = await eng.get(`/api/alarm-response-sheets?siteId=${fhr}&areaId=${areaId}`).expect(200)
    expect(booklet.headers['content-type']).toBe('application/pdf')
    expect(pages(booklet.body)).toBe(1)
    expect(booklet.headers['content-disposition']).toMatch(/FHR_Tank_Farm/)
  })

  it('answers 404 for an area of another site and 400 for a bad id', async () => {
    await eng.get(`/api/alarm-response-sheets?siteId=${smp}&areaId=${areaId}`).expect(404)
    await eng.get(`/api/alarm-response-sheets?siteId=${fhr}&areaId=${otherAreaId}`).expect(404)
    await eng.get(`/api/alarm-response-sheets?siteId=abc`).expect(400)
  })
})

import type { Express } from 'express'
import pg from 'pg'
import { beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { ApiAgent, signedIn, siteIdByCode } from './helpers/agent.ts'
import { heaterThermocouple, heaterTripBody, rowsAndAudit } from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'

const ctx = useTestDb()

// docs/security.md, "Authorization": only the safety engineer creates processes and instruments and drafts limits;
// every role reads the
// register of its own sites. Demo accounts (server/seed/demo.ts): supervisor and operator hold their role at FHR only.
const READERS = ['admin', 'engineer', 'approver', 'supervisor', 'technician', 'operator', 'manager', 'auditor'] as const
const NOT_EDITORS = ['admin', 'approver', 'supervisor', 'technician', 'operator', 'manager', 'auditor'] as const
type Who = (typeof READERS)[number]

interface Built {
  siteId: number
  areaId: number
  processId: number
  instrumentId: number
  limitId: number
}

let app: Express
const agents = {} as Record<Who, ApiAgent>
let fhr: Built
let smp: Built
let seq = 0

async function build(eng: ApiAgent, siteCode: 'FHR' | 'SMP'): Promise<Built> {
  const n = ++seq
  const siteId = await siteIdByCode(eng, siteCode)
  const areaId = (await eng.get(`/api/areas?siteId=${siteId}`).expect(200)).body.items[0].id
  const proc = await eng.created('/api/processes', {
    areaId,
    name: `Roles test heater H-${siteCode}-${n}`,
    description: '',
  })
  const inst = await eng.created('/api/instruments', heaterThermocouple(proc.id, `TT-R${siteCode}${n}`))
  const limit = (await eng.post('/api/limits', heaterTripBody(proc.id, [inst.id], `TSHH-R${siteCode}${n}`)).expect(201))
    .body
  return { siteId, areaId, processId: proc.id, instrumentId: inst.id, limitId: limit.id }
}

/** Everything a register write would change. */
async function snapshot() {
  const limits = await ctx.db
    .selectFrom('limit_function')
    .select(['id', 'revision', 'setpoint', 'status'])
    .orderBy('id')
    .execute()
  const instruments = await ctx.db
    .selectFrom('instrument')
    .select(['id', 'revision', 'range_high'])
    .orderBy('id')
    .execute()
  const processes = await ctx.db.selectFrom('process').select(['id', 'name']).orderBy('id').execute()
  const counted = await rowsAndAudit(ctx.db, {
    processes: 'process',
    instruments: 'instrument',
    limits: 'limit_function',
    limitRevisions: 'limit_revision',
    instrumentRevisions: 'instrument_revision',
  })
  return { ...counted, rows: { limits, instruments, processes } }
}

beforeAll(async () => {
  app = createApp(ctx)
  for (const who of READERS) agents[who] = await signedIn(app, who)
  fhr = await build(agents.engineer, 'FHR')
  smp = await build(agents.engineer, 'SMP')
})

describe('register: create, edit and delete by role', () => {
  it('lets the safety engineer create a process, an instrument and a draft limit, edit them and delete the draft', async () => {
    const eng = agents.engineer
    const proc = await eng.created('/api/processes', {
      areaId: fhr.areaId,
      name: 'Roles test reboiler E-7',
      description: 'kettle',
    })
    expect(
      (await eng.patch(`/api/processes/${proc.id}`, { description: 'kettle reboiler' }).expect(200)).body.description,
    ).toBe('kettle reboiler')
    const inst = await eng.created('/api/instruments', heaterThermocouple(proc.id, 'TT-R-E7'))
    expect((await eng.patch(`/api/instruments/${inst.id}`, { rangeHigh: 1250 }).expect(200)).body.rangeHigh).toBe(1250)
    const limit = await eng.created('/api/limits', heaterTripBody(proc.id, [inst.id], 'TSHH-R-E7'))
    expect(limit.status).toBe('proposed')
    const edited = (await eng.patch(`/api/limits/${limit.id}`, { setpoint: 790 }).expect(200)).body
    expect(edited).toMatchObject({ setpoint: 790, revision: 2 })
    await eng.delete(`/api/limits/${limit.id}`).expect(204)
    await eng.get(`/api/limits/${limit.id}`).expect(404)
  })

  for (const who of NOT_EDITORS) {
    it(`refuses ${who} with 403 on every create, edit and delete, and writes nothing`, async () => {
      const a = agents[who]
      const before = await snapshot()
      const calls: [string, () => ReturnType<ApiAgent['get']>][] = [
        [
          'create a process',
          () => a.post('/api/processes', { areaId: fhr.areaId, name: `Forbidden process ${who}`, description: '' }),
        ],
        ['edit a process', () => a.patch(`/api/processes/${fhr.processId}`, { description: `changed by ${who}` })],
        ['create an instrument', () => a.post('/api/instruments', heaterThermocouple(fhr.processId, `TT-X-${who}`))],
        ['edit an instrument', () => a.patch(`/api/instruments/${fhr.instrumentId}`, { rangeHigh: 1300 })],
        [
          'draft a limit',
          () => a.post('/api/limits', heaterTripBody(fhr.processId, [fhr.instrumentId], `TSHH-X-${who}`)),
        ],
        ['edit a draft limit', () => a.patch(`/api/limits/${fhr.limitId}`, { setpoint: 800 })],
        ['delete a draft limit', () => a.delete(`/api/limits/${fhr.limitId}`)],
      ]
      for (const [name, call] of calls) {
        const res = await call()
        expect(res.status, name).toBe(403)
        expect(res.body.error.code, name).toBe('FORBIDDEN')
      }
      expect(await snapshot()).toEqual(before)
    })
  }

  it('answers 409 INVALID_STATE on editing or deleting an active limit, and changes nothing', async () => {
    const eng = agents.engineer
    const built = await build(eng, 'FHR')
    const owner = new pg.Client({ connectionString: ctx.database.ownerUrl })
    await owner.connect()
    await owner.query('UPDATE limit_function SET status = $1 WHERE id = $2', ['active', built.limitId])
    await owner.end()
    const before = await snapshot()
    const patch = await eng.patch(`/api/limits/${built.limitId}`, { setpoint: 790 }).expect(409)
    expect(patch.body.error.code).toBe('INVALID_STATE')
    expect((await eng.delete(`/api/limits/${built.limitId}`).expect(409)).body.error.code).toBe('INVALID_STATE')
    // an instrument behind an active limit changes through a change request too
    expect(
      (await eng.patch(`/api/instruments/${built.instrumentId}`, { rangeHigh: 1300 }).expect(409)).body.error.code,
    ).toBe('INVALID_STATE')
    expect(await snapshot()).toEqual(before)
  })

  it('answers 401 to a visitor who is not signed in', async () => {
    const anon = new ApiAgent(app)
    await anon.refreshCsrf()
    await anon.get('/api/limits').expect(401)
    await anon.post('/api/processes', { areaId: fhr.areaId, name: 'Anonymous', description: '' }).expect(401)
  })
})

describe('register: reading by role and site', () => {
  for (const who of READERS) {
    it(`lets ${who} read the register, a limit, its instrument and its process at FHR`, async () => {
      const a = agents[who]
      const list = (await a.get(`/api/limits?processId=${fhr.processId}`).expect(200)).body
      expect(list.items.map((l: { id: number }) => l.id)).toEqual([fhr.limitId])
      expect((await a.get(`/api/limits/${fhr.limitId}`).expect(200)).body.operatingWindow).toEqual({
        errors: [],
        warnings: expect.any(Array),
      })
      expect((await a.get(`/api/instruments/${fhr.instrumentId}`).expect(200)).body.id).toBe(fhr.instrumentId)
      expect((await a.get(`/api/processes/${fhr.processId}`).expect(200)).body.id).toBe(fhr.processId)
    })
  }

  for (const who of ['operator', 'supervisor'] as const) {
    it(`shows ${who} (FHR only) no SMP rows and answers 404 for an SMP limit, instrument and process`, async () => {
      const a = agents[who]
      // another site's record answers exactly as a missing id (docs/security.md#authorization)
      const missing = (await a.get('/api/limits/2147483647').expect(404)).body
      expect((await a.get(`/api/limits/${smp.limitId}`).expect(404)).body).toEqual(missing)
      await a.get(`/api/instruments/${smp.instrumentId}`).expect(404)
      await a.get(`/api/processes/${smp.processId}`).expect(404)
      const all = (await a.get('/api/limits?pageSize=200').expect(200)).body
      expect(all.items.length).toBeGreaterThan(0)
      expect(all.items.every((l: { siteId: number }) => l.siteId === fhr.siteId)).toBe(true)
      const asked = (await a.get(`/api/limits?siteId=${smp.siteId}`).expect(200)).body
      expect(asked.items).toEqual([])
      expect(asked.total).toBe(0)
      const instruments = (await a.get(`/api/instruments?processId=${smp.processId}`).expect(200)).body
      expect(instruments.items).toEqual([])
    })
  }

  it('shows a user with roles at both sites the SMP limit', async () => {
    const list = (await agents.auditor.get(`/api/limits?siteId=${smp.siteId}&processId=${smp.processId}`).expect(200))
      .body
    expect(list.items.map((l: { id: number }) => l.id)).toEqual([smp.limitId])
  })
})

describe('register tags', () => {
  // docs/register.md: instrument and limit tags are unique per site, whatever their case
  it('refuses an instrument or limit tag the site already has in another case (409), not one of another site', async () => {
    const eng = agents.engineer
    const tagOf = async (path: string) => ((await eng.get(path).expect(200)).body.tag as string).toLowerCase()
    const before = await snapshot()
    const inst = await eng
      .post('/api/instruments', heaterThermocouple(fhr.processId, await tagOf(`/api/instruments/${fhr.instrumentId}`)))
      .expect(409)
    expect(inst.body.error.code).toBe('CONFLICT')
    expect(inst.body.error.details.fields.tag).toEqual(['Already used at this site'])
    const limitTag = await tagOf(`/api/limits/${fhr.limitId}`)
    const limit = await eng.post('/api/limits', heaterTripBody(fhr.processId, [fhr.instrumentId], limitTag)).expect(409)
    expect(limit.body.error.code).toBe('CONFLICT')
    expect(limit.body.error.details.fields.tag).toEqual(['Already used at this site'])
    expect(await snapshot()).toEqual(before)
    // the tags of the SMP records are free at FHR
    const smpInstrumentTag = await tagOf(`/api/instruments/${smp.instrumentId}`)
    const other = await eng.post('/api/instruments', heaterThermocouple(fhr.processId, smpInstrumentTag)).expect(201)
    const smpLimitTag = await tagOf(`/api/limits/${smp.limitId}`)
    await eng.post('/api/limits', heaterTripBody(fhr.processId, [other.body.id], smpLimitTag)).expect(201)
  })
})

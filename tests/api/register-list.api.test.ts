import type { Express } from 'express'
import pg from 'pg'
import { beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { type ApiAgent, signedIn, siteIdByCode } from './helpers/agent.ts'
import { thermocoupleK } from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'

const ctx = useTestDb()

interface Item {
  id: number
  tag: string
  siteId: number
  areaId: number
  processId: number
  instrumentIds: number[]
  limitClass: string
  direction: string
  sil: number | null
  status: string
  protectionState: string
  setpoint: number
  operatingWindow: { errors: unknown[]; warnings: unknown[] }
}

let app: Express
let eng: ApiAgent
const ids = { fhr: 0, smp: 0, utilities: 0, tankFarm: 0, p1: 0, p2: 0, i1: 0, i2: 0 }
const L = {} as Record<
  'trip800' | 'alarm700' | 'lowTrip200' | 'sil900' | 'warned850' | 'lowAlarm250' | 'smp780',
  number
>

const subsystems = [
  {
    role: 'sensor',
    architecture: '1oo2',
    lambdaDu: 5e-7,
    beta: 0.1,
    mttrHours: 8,
    testIntervalMonths: 12,
    testCoverage: 0.9,
    missionTimeYears: 20,
  },
  {
    role: 'logic',
    architecture: '1oo1',
    lambdaDu: 1e-8,
    beta: 0,
    mttrHours: 8,
    testIntervalMonths: 12,
    testCoverage: 1,
    missionTimeYears: 20,
  },
  {
    role: 'final_element',
    architecture: '1oo1',
    lambdaDu: 2e-6,
    beta: 0,
    mttrHours: 24,
    testIntervalMonths: 12,
    testCoverage: 0.8,
    missionTimeYears: 20,
  },
]

async function instrument(processId: number, tag: string, over: Record<string, unknown> = {}) {
  return (await eng.created('/api/instruments', thermocoupleK(processId, tag, over))).id as number
}

async function limit(processId: number, instrumentId: number, tag: string, over: Record<string, unknown>) {
  return (
    await eng.created('/api/limits', {
      processId,
      instrumentIds: [instrumentId],
      tag,
      description: `List test ${tag}`,
      direction: 'high',
      limitClass: 'trip',
      deadband: 0,
      severity: 'major',
      testIntervalMonths: 12,
      ...over,
    })
  ).id as number
}

async function list(query: string): Promise<{ items: Item[]; total: number; nextCursor: string | null }> {
  return (await eng.get(`/api/limits?${query}`).expect(200)).body
}

const mine = () => `processId=${ids.p1}&processId=${ids.p2}`
const tags = (items: Item[]) => items.map((i) => i.tag)

beforeAll(async () => {
  app = createApp(ctx)
  eng = await signedIn(app, 'engineer')
  ids.fhr = await siteIdByCode(eng, 'FHR')
  ids.smp = await siteIdByCode(eng, 'SMP')
  const areas = (await eng.get(`/api/areas?siteId=${ids.fhr}`).expect(200)).body.items as { id: number; name: string }[]
  ids.utilities = areas.find((a) => a.name === 'Utilities')!.id
  ids.tankFarm = areas.find((a) => a.name === 'Tank Farm')!.id
  ids.p1 = (
    await eng.created('/api/processes', { areaId: ids.utilities, name: 'List test heater H-L1', description: '' })
  ).id
  ids.p2 = (
    await eng.created('/api/processes', { areaId: ids.tankFarm, name: 'List test tank heater H-L2', description: '' })
  ).id
  ids.i1 = await instrument(ids.p1, 'TT-QL1')
  ids.i2 = await instrument(ids.p1, 'TT-QL2')
  const i3 = await instrument(ids.p2, 'TT-QL3', { designHigh: 850 })
  L.trip800 = await limit(ids.p1, ids.i1, 'QLIST-1', { setpoint: 800 })
  L.alarm700 = await limit(ids.p1, ids.i1, 'QLIST-2', { limitClass: 'alarm', setpoint: 700, responseTimeMin: 10 })
  L.lowTrip200 = await limit(ids.p1, ids.i1, 'QLIST-3', { direction: 'low', setpoint: 200, badValueTrip: true })
  L.sil900 = await limit(ids.p1, ids.i2, 'QLIST-4', { setpoint: 900, sil: 2, subsystems })
  L.warned850 = await limit(ids.p2, i3, 'QLIST-5', { setpoint: 850 }) // at the design high: a stored warning
  L.lowAlarm250 = await limit(ids.p2, i3, 'QLIST-6', {
    limitClass: 'alarm',
    direction: 'low',
    setpoint: 250,
    responseTimeMin: 10,
  })
  const smpArea = (await eng.get(`/api/areas?siteId=${ids.smp}`).expect(200)).body.items[0].id
  const p3 = (await eng.created('/api/processes', { areaId: smpArea, name: 'List test heater H-L3', description: '' }))
    .id
  L.smp780 = await limit(p3, await instrument(p3, 'TT-QL4'), 'QLIST-7', { setpoint: 780 })

  // states the API sets only through change requests, bypasses and tests: written as the owner
  const owner = new pg.Client({ connectionString: ctx.database.ownerUrl })
  await owner.connect()
  await owner.query('UPDATE limit_function SET status = $1 WHERE id = $2', ['active', L.lowAlarm250])
  await owner.query('UPDATE limit_function SET protection_state = $1 WHERE id = $2', ['bypassed', L.warned850])
  await owner.query('UPDATE limit_function SET window_errors = $1 WHERE id = $2', [
    JSON.stringify([{ code: 'SETPOINT_OUTSIDE_RANGE', field: 'setpoint', message: 'stored error' }]),
    L.lowTrip200,
  ])
  await owner.end()
})

describe('GET /api/limits: filters', () => {
  it('lists the six test rows of the two processes as the baseline', async () => {
    const all = await list(mine())
    expect(tags(all.items)).toEqual(['QLIST-1', 'QLIST-2', 'QLIST-3', 'QLIST-4', 'QLIST-5', 'QLIST-6'])
    expect(all.total).toBe(6)
  })

  const cases: [string, () => string, (i: Item) => boolean, string[]][] = [
    [
      'areaId',
      () => `areaId=${ids.utilities}`,
      (i) => i.areaId === ids.utilities,
      ['QLIST-1', 'QLIST-2', 'QLIST-3', 'QLIST-4'],
    ],
    [
      'instrumentId',
      () => `instrumentId=${ids.i1}`,
      (i) => i.instrumentIds.includes(ids.i1),
      ['QLIST-1', 'QLIST-2', 'QLIST-3'],
    ],
    ['limitClass', () => 'limitClass=alarm', (i) => i.limitClass === 'alarm', ['QLIST-2', 'QLIST-6']],
    ['direction', () => 'direction=low', (i) => i.direction === 'low', ['QLIST-3', 'QLIST-6']],
    ['sil', () => 'sil=2', (i) => i.sil === 2, ['QLIST-4']],
    ['sil=none', () => 'sil=none', (i) => i.sil === null, ['QLIST-1', 'QLIST-2', 'QLIST-3', 'QLIST-5', 'QLIST-6']],
    ['status', () => 'status=active', (i) => i.status === 'active', ['QLIST-6']],
    ['protectionState', () => 'protectionState=bypassed', (i) => i.protectionState === 'bypassed', ['QLIST-5']],
    ['hasWarnings', () => 'hasWarnings=true', (i) => i.operatingWindow.warnings.length > 0, ['QLIST-5']],
    ['hasErrors', () => 'hasErrors=true', (i) => i.operatingWindow.errors.length > 0, ['QLIST-3']],
    ['q (tag)', () => 'q=qlist-4', (i) => i.tag === 'QLIST-4', ['QLIST-4']],
    ['q (description)', () => 'q=test%20qlist-5', (i) => i.tag === 'QLIST-5', ['QLIST-5']],
    [
      'two values of one filter',
      () => 'direction=low&limitClass=alarm&limitClass=trip',
      (i) => i.direction === 'low',
      ['QLIST-3', 'QLIST-6'],
    ],
  ]
  for (const [name, query, holds, expected] of cases) {
    it(`narrows the list by ${name}`, async () => {
      const res = await list(`${mine()}&${query()}`)
      expect(res.items.every(holds)).toBe(true)
      expect(tags(res.items)).toEqual(expected)
      expect(res.total).toBe(expected.length)
    })
  }

  it('narrows the list by processId (repeated values widen it again)', async () => {
    const one = await list(`processId=${ids.p2}`)
    expect(one.items.every((i) => i.processId === ids.p2)).toBe(true)
    expect(tags(one.items)).toEqual(['QLIST-5', 'QLIST-6'])
    expect((await list(mine())).total).toBe(6)
  })

  it('narrows the whole register by siteId', async () => {
    const smp = await list(`siteId=${ids.smp}&q=qlist`)
    expect(tags(smp.items)).toEqual(['QLIST-7'])
    const fhr = await list(`siteId=${ids.fhr}&q=qlist`)
    expect(tags(fhr.items)).toEqual(['QLIST-1', 'QLIST-2', 'QLIST-3', 'QLIST-4', 'QLIST-5', 'QLIST-6'])
    const both = await list('q=qlist')
    expect(both.total).toBe(7)
  })
})

describe('GET /api/limits: sorting and paging', () => {
  it('sorts by -setpoint (highest first)', async () => {
    const res = await list(`${mine()}&sort=-setpoint`)
    expect(res.items.map((i) => i.setpoint)).toEqual([900, 850, 800, 700, 250, 200])
  })

  for (const sort of ['tag', '-setpoint']) {
    it(`pages by page number and by nextCursor to the same rows without overlap (sort=${sort})`, async () => {
      const full = tags((await list(`${mine()}&sort=${sort}`)).items)
      const byPage: string[] = []
      for (let page = 1; page <= 3; page++)
        byPage.push(...tags((await list(`${mine()}&sort=${sort}&pageSize=2&page=${page}`)).items))
      expect(byPage).toEqual(full)

      const byCursor: string[] = []
      let res = await list(`${mine()}&sort=${sort}&pageSize=2`)
      byCursor.push(...tags(res.items))
      while (res.nextCursor) {
        res = await list(`${mine()}&sort=${sort}&pageSize=2&cursor=${encodeURIComponent(res.nextCursor)}`)
        byCursor.push(...tags(res.items))
      }
      expect(byCursor).toEqual(full)
      expect(new Set(byCursor).size).toBe(full.length)
    })
  }

  it('answers 400 for pageSize above 200 and for a cursor that is not one', async () => {
    const res = await eng.get(`/api/limits?${mine()}&pageSize=201`).expect(400)
    expect(res.body.error.details.fields.pageSize).toBeDefined()
    await eng.get(`/api/limits?${mine()}&pageSize=200`).expect(200)
    const bad = await eng.get(`/api/limits?${mine()}&cursor=not-a-cursor`).expect(400)
    expect(bad.body.error.details.fields.cursor).toBeDefined()
  })
})

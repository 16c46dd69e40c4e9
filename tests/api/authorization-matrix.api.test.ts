// The authorization matrix: every state-changing route of the app (read from Express's router stack), called by
// anonymous, and by one account per role at its own site and at the other site, against the expected answers of
// shared/abilities/routes.ts. A route missing from that table fails here, so a new route has to be placed in it.
// "Passes authorization" is any answer but 401 and 403 FORBIDDEN (a 400 for an incomplete body, a 409 for a record's
// state); a refusal writes nothing it would need to undo. Accounts sign in once each: no argon2 per request.
import type { Express } from 'express'
import pg from 'pg'
import { beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { createDb } from '../../server/db/index.ts'
import { hashPassword } from '../../server/features/session/passwords.ts'
import { seedDemoActivity } from '../../server/seed/demo-activity.ts'
import { seedDemoReconciliation } from '../../server/seed/demo-reconciliation.ts'
import { seedDemoShiftHandover } from '../../server/seed/demo-shift-handover.ts'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { ROUTE_ACCESS, type RouteAccess } from '../../shared/abilities/routes.ts'
import { ROLES, type Role } from '../../shared/schemas/users.ts'
import { ApiAgent } from './helpers/agent.ts'
import { mutatingRoutes, type AppRoute } from './helpers/routes.ts'
import { useTestDb } from './helpers/test-db.ts'

const ctx = useTestDb({ register: true })
const PW = 'matrix-account-password-7'
/** An id that exists nowhere (int32 max, a valid id). */
const MISSING = 2_147_483_647

/** The records a call names, at one site. */
interface Fixtures {
  siteId: number
  areaId: number
  processId: number
  instrumentId: number
  limitId: number
  changeRequestId: number
  tripTestId: number
  deferralId: number
  bypassId: number
  handoverId: number
  demandId: number
  alarmStateId: number
  replayId: number
  importId: number
  sourceId: number
  findingId: number
  userId: number
}

interface CallSpec {
  params?: (f: Fixtures) => Record<string, number | string>
  body?: (f: Fixtures) => Record<string, unknown>
  /** multipart: form fields and one file */
  form?: (f: Fixtures) => { fields: Record<string, string>; file: { name: string; content: string } | null }
}

const sign = { password: PW }
const tripTest = (f: Fixtures) => ({
  limitId: f.limitId,
  kind: 'full',
  method: 'injection',
  injectionPoint: 'sensor',
  sourceMode: 'mv_source',
  coldJunctionC: 25,
  calibratorId: 'CAL-07',
  calibratorDueDate: '2030-12-31',
  performedAt: '2026-09-07T04:30:00Z',
  finalElementOk: true,
  latchHeld: true,
  noTrip: true,
})
const csv = (content: string) => ({ name: 'file.csv', content })

/** How each route is called: the ids it names and a body that gets past validation where one is parsed first. */
const CALLS: Record<string, CallSpec> = {
  'POST /api/session': { body: () => ({}) },
  'DELETE /api/session': {},
  'POST /api/test/clock': { body: () => ({}) },
  'POST /api/account/password': { body: () => ({}) },
  'POST /api/users': {
    body: (f) => ({
      email: `matrix-${Math.random().toString(36).slice(2)}@fernhollow.example`,
      displayName: 'Matrix Person',
      password: 'quiet harbour lantern meadow',
      roles: [{ siteId: f.siteId, role: 'operator' }],
    }),
  },
  'PATCH /api/users/:id': { params: (f) => ({ id: f.userId }), body: () => ({ displayName: 'Renamed Person' }) },
  'POST /api/sites': {
    body: () => ({ code: `M-${Math.floor(Math.random() * 1e6)}`, name: 'Matrix Works', timeZone: 'Europe/Vienna' }),
  },
  'PATCH /api/sites/:id': { params: (f) => ({ id: f.siteId }), body: () => ({}) },
  'POST /api/areas': { body: (f) => ({ siteId: f.siteId, name: 'Matrix Bay' }) },
  'PATCH /api/areas/:id': { params: (f) => ({ id: f.areaId }), body: () => ({ name: 'Renamed Bay' }) },
  'POST /api/processes': { body: (f) => ({ areaId: f.areaId, name: 'Matrix heater', description: '' }) },
  'PATCH /api/processes/:id': { params: (f) => ({ id: f.processId }), body: () => ({}) },
  'POST /api/instruments': {
    body: (f) => ({
      processId: f.processId,
      tag: `TT-M${Math.floor(Math.random() * 1e6)}`,
      measuredVariable: 'temperature',
      unit: '°C',
      rangeLow: 0,
      rangeHigh: 1200,
      normalLow: 300,
      normalHigh: 650,
      designLow: null,
      designHigh: 900,
      burnout: 'upscale',
      signal: { kind: 'thermocouple', tcType: 'K', headTransmitter: false },
      deviceKind: 'limit_controller',
    }),
  },
  'PATCH /api/instruments/:id': { params: (f) => ({ id: f.instrumentId }), body: () => ({}) },
  'POST /api/limits': {
    body: (f) => ({
      processId: f.processId,
      instrumentIds: [f.instrumentId],
      tag: `TSHH-M${Math.floor(Math.random() * 1e6)}`,
      direction: 'high',
      limitClass: 'trip',
      setpoint: 780,
      deadband: 5,
      severity: 'severe',
      testIntervalMonths: 12,
      latching: true,
      resetRole: 'operator',
      sil: null,
      subsystems: [],
      compensatingMeasures: ['Local reading every 15 min'],
      maxBypassHours: 8,
      bypassPermitted: true,
    }),
  },
  'PATCH /api/limits/:id': { params: (f) => ({ id: f.limitId }), body: () => ({}) },
  'DELETE /api/limits/:id': { params: (f) => ({ id: f.limitId }) },
  'POST /api/imports': { form: (f) => ({ fields: { siteId: String(f.siteId) }, file: csv('tag\n') }) },
  'POST /api/imports/:id/commit': { params: (f) => ({ id: f.importId }), body: () => ({}) },
  'POST /api/limits/:id/degradation': {
    params: (f) => ({ id: f.limitId }),
    body: () => ({ compensatingMeasures: ['Hourly local reading'], repairDeadline: '2030-01-01', ...sign }),
  },
  'POST /api/limits/:id/degradation/deadline-approval': { params: (f) => ({ id: f.limitId }), body: () => sign },
  'POST /api/test-deferrals': {
    body: (f) => ({
      limitId: f.limitId,
      newDueDate: '2030-01-01',
      reason: 'Unit down for turnaround',
      compensatingMeasures: ['Hourly local reading'],
    }),
  },
  'POST /api/test-deferrals/:id/approval': { params: (f) => ({ id: f.deferralId }), body: () => sign },
  'POST /api/test-deferrals/:id/rejection': {
    params: (f) => ({ id: f.deferralId }),
    body: () => ({ ...sign, comment: 'Not agreed' }),
  },
  'POST /api/trip-tests': { body: (f) => tripTest(f) },
  'PUT /api/trip-tests/:id': { params: (f) => ({ id: f.tripTestId }), body: (f) => tripTest(f) },
  'POST /api/trip-tests/:id/signatures': {
    params: (f) => ({ id: f.tripTestId }),
    body: () => ({ meaning: 'witnessed', ...sign }),
  },
  'POST /api/trip-tests/:id/attachments': {
    params: (f) => ({ id: f.tripTestId }),
    form: () => ({ fields: {}, file: null }),
  },
  'POST /api/trip-tests/digest-runs': { body: (f) => ({ siteId: f.siteId }) },
  'POST /api/bypasses': {
    body: (f) => ({
      limitId: f.limitId,
      reason: 'Transmitter replacement',
      plannedStart: '2030-01-01T08:00:00Z',
      plannedEnd: '2030-01-01T10:00:00Z',
    }),
  },
  'POST /api/bypasses/:id/authorizations': { params: (f) => ({ id: f.bypassId }), body: () => sign },
  'POST /api/bypasses/:id/rejections': {
    params: (f) => ({ id: f.bypassId }),
    body: () => ({ ...sign, comment: 'No' }),
  },
  'POST /api/bypasses/:id/activation': { params: (f) => ({ id: f.bypassId }), body: () => ({}) },
  'POST /api/bypasses/:id/removal': {
    params: (f) => ({ id: f.bypassId }),
    body: () => ({ pvClearConfirmed: true, protectionRestoredConfirmed: true }),
  },
  'POST /api/bypasses/:id/cancellation': { params: (f) => ({ id: f.bypassId }), body: () => ({}) },
  'POST /api/shift-handovers': {
    body: (f) => ({ areaIds: [f.areaId], stateHash: 'a'.repeat(64), ...sign }),
  },
  'POST /api/shift-handovers/:id/acceptance': {
    params: (f) => ({ id: f.handoverId }),
    body: () => ({ contentHash: 'a'.repeat(64), ...sign }),
  },
  'POST /api/change-requests': {
    body: (f) => ({
      siteId: f.siteId,
      type: 'permanent',
      title: 'Matrix change',
      items: [{ kind: 'create', limitId: f.limitId }],
    }),
  },
  'PATCH /api/change-requests/:id': { params: (f) => ({ id: f.changeRequestId }), body: () => ({}) },
  'POST /api/change-requests/:id/submission': { params: (f) => ({ id: f.changeRequestId }) },
  'POST /api/change-requests/:id/withdrawal': { params: (f) => ({ id: f.changeRequestId }) },
  'POST /api/change-requests/:id/approvals': { params: (f) => ({ id: f.changeRequestId }), body: () => sign },
  'POST /api/change-requests/:id/rejections': {
    params: (f) => ({ id: f.changeRequestId }),
    body: () => ({ ...sign, comment: 'No' }),
  },
  'POST /api/change-requests/:id/implementations': {
    params: (f) => ({ id: f.changeRequestId }),
    body: () => ({ allItems: true, deviceListConfirmed: true, ...sign }),
  },
  'POST /api/change-requests/:id/read-back-checks': {
    params: (f) => ({ id: f.changeRequestId }),
    body: () => ({ itemId: 1 }),
  },
  'POST /api/change-requests/:id/closure': {
    params: (f) => ({ id: f.changeRequestId }),
    body: () => ({ ...sign, pssr: { reference: 'PSSR-1', readyForService: true } }),
  },
  'PUT /api/change-requests/:id/checklist/:item': {
    params: (f) => ({ id: f.changeRequestId, item: 'operating_procedures' }),
    body: () => ({ done: true }),
  },
  'POST /api/change-requests/:id/attachments': {
    params: (f) => ({ id: f.changeRequestId }),
    form: () => ({ fields: {}, file: null }),
  },
  'POST /api/demands': {
    body: (f) => ({
      limitId: f.limitId,
      kind: 'real_demand',
      outcome: 'acted',
      occurredAt: '2026-09-01T10:00:00Z',
      description: 'High temperature, the trip acted',
    }),
  },
  'POST /api/demands/:id/classification': {
    params: (f) => ({ id: f.demandId }),
    body: () => ({ counts: true, note: 'Genuine demand' }),
  },
  'POST /api/demands/:id/credit': {
    params: (f) => ({ id: f.demandId }),
    body: () => ({ ...sign, coveredWhatTheTestCovers: true, note: 'The whole function acted' }),
  },
  'PUT /api/demands/assumptions/:limitId': {
    params: (f) => ({ limitId: f.limitId }),
    body: () => ({
      assumedDemandRatePerYear: 0.1,
      assumedSpuriousRatePerYear: 0.2,
      commissionedAt: null,
      reason: 'Hazard study',
    }),
  },
  'POST /api/alarm-journals': {
    form: (f) => ({ fields: { siteId: String(f.siteId), timeZone: 'UTC' }, file: csv('time,tag\n') }),
  },
  'POST /api/alarm-states': {
    body: (f) => ({ siteId: f.siteId, tag: 'TI-1', kind: 'shelved', reason: 'Chattering', hours: 1 }),
  },
  'POST /api/alarm-states/:id/end': { params: (f) => ({ id: f.alarmStateId }), body: () => ({ note: 'Back' }) },
  'POST /api/replays': {
    form: (f) => ({ fields: { siteId: String(f.siteId), timeZone: 'UTC' }, file: csv('time,value\n') }),
  },
  'POST /api/replays/:id/run': { params: (f) => ({ id: f.replayId }), body: () => ({}) },
  'POST /api/reconciliation-sources': {
    body: (f) => ({ siteId: f.siteId, kind: 'export', name: 'Matrix export' }),
  },
  'PATCH /api/reconciliation-sources/:id': { params: (f) => ({ id: f.sourceId }), body: () => ({ version: 1 }) },
  'POST /api/reconciliation-sources/:id/reads': { params: (f) => ({ id: f.sourceId }) },
  'POST /api/reconciliation-sources/:id/runs': { params: (f) => ({ id: f.sourceId }), body: () => ({}) },
  'POST /api/reconciliation-sources/:id/exports': {
    params: (f) => ({ id: f.sourceId }),
    form: () => ({ fields: { mapping: '{}' }, file: csv('tag,setpoint\n') }),
  },
  'POST /api/findings/:id/acknowledgement': { params: (f) => ({ id: f.findingId }), body: () => ({ version: 1 }) },
  'POST /api/findings/:id/change-request': {
    params: (f) => ({ id: f.findingId }),
    body: (f) => ({ version: 1, changeRequestId: f.changeRequestId }),
  },
  'POST /api/findings/:id/acceptance': {
    params: (f) => ({ id: f.findingId }),
    body: () => ({ version: 1, reason: 'Accepted as the device holds it', ...sign }),
  },
}

let app: Express
let routes: AppRoute[]
const fixtures: { own: Fixtures; other: Fixtures; missing: Fixtures } = {} as never
const agents = new Map<Role, ApiAgent>()
/** an anonymous caller with the CSRF token of its anonymous session, as the sign-in page has one */
let anonymous: ApiAgent

const TABLES = [
  'area',
  'process',
  'instrument',
  'limit_function',
  'change_request',
  'trip_test',
  'test_deferral',
  'bypass',
  'shift_handover',
  'demand',
  'alarm_state',
  'process_data_upload',
  'import_batch',
  'reconciliation_source',
  'finding',
]

/**
 * The demo plant holds most records at Fernhollow; what the matrix needs and the demo lacks is made here: at
 * Fernhollow (where calls pass) through the API or as plain rows, at Saltmarsh (where every call is refused before
 * the record is used) as a copy of a Fernhollow row moved to that site.
 */
async function completeFixtures(app: Express, fhr: number, smp: number, adminId: number) {
  const c = new pg.Client({ connectionString: ctx.database.ownerUrl })
  await c.connect()
  try {
    const has = async (t: string, site: number) =>
      (await c.query(`SELECT 1 FROM ${t} WHERE site_id = $1 LIMIT 1`, [site])).rowCount! > 0
    if (!(await has('import_batch', fhr)))
      await c.query(
        `INSERT INTO import_batch (site_id, created_by, file_name, checksum, row_count, rows, created_at)
         VALUES ($1, $2, 'register.csv', '0', 0, '[]', now())`,
        [fhr, adminId],
      )
    if (!(await has('process_data_upload', fhr)))
      await c.query(
        `INSERT INTO process_data_upload (site_id, created_by, file_name, time_zone, series, status, rejections, created_at)
         VALUES ($1, $2, 'pv.csv', 'UTC', '[]', 'done', '[]', now())`,
        [fhr, adminId],
      )
    if (!(await has('finding', fhr))) {
      const src = (await c.query(`SELECT id FROM reconciliation_source WHERE site_id = $1 ORDER BY id LIMIT 1`, [fhr]))
        .rows[0].id
      const run = (
        await c.query(
          `INSERT INTO reconciliation_run (source_id, site_id, trigger, outcome, started_at, finished_at)
           VALUES ($1, $2, 'manual', 'completed', now(), now()) RETURNING id`,
          [src, fhr],
        )
      ).rows[0].id
      await c.query(
        `INSERT INTO finding (site_id, source_id, tag, kind, first_run_id, last_run_id, first_seen_at, last_seen_at, opened_at)
         VALUES ($1, $2, 'TT-MATRIX', 'not_in_register', $3, $3, now(), now(), now())`,
        [fhr, src, run],
      )
    }
    if (!(await has('shift_handover', fhr))) {
      const sup = new ApiAgent(app)
      await sup.signIn('supervisor@fernhollow.example', DEMO_PASSWORD)
      const area = (await c.query(`SELECT id FROM area WHERE site_id = $1 ORDER BY id LIMIT 1`, [fhr])).rows[0].id
      const state = await sup.get(`/api/shift-handovers/state?areaId=${area}`).expect(200)
      await sup
        .post('/api/shift-handovers', { areaIds: [area], stateHash: state.body.stateHash, password: DEMO_PASSWORD })
        .expect(201)
    }
    if (!(await has('shift_handover', smp))) {
      // the demo's supervisor works at Fernhollow; for this handover they are given Saltmarsh too
      const supId = (await c.query(`SELECT id FROM app_user WHERE email = 'supervisor@fernhollow.example'`)).rows[0].id
      await c.query(`INSERT INTO role_assignment (user_id, site_id, role) VALUES ($1, $2, 'shift_supervisor')`, [
        supId,
        smp,
      ])
      const sup = new ApiAgent(app)
      await sup.signIn('supervisor@fernhollow.example', DEMO_PASSWORD)
      const area = (await c.query(`SELECT id FROM area WHERE site_id = $1 ORDER BY id LIMIT 1`, [smp])).rows[0].id
      const state = await sup.get(`/api/shift-handovers/state?areaId=${area}`).expect(200)
      await sup
        .post('/api/shift-handovers', { areaIds: [area], stateHash: state.body.stateHash, password: DEMO_PASSWORD })
        .expect(201)
    }
    for (const t of TABLES) {
      if (await has(t, smp)) continue
      const cols = (
        await c.query<{ column_name: string }>(
          `SELECT column_name FROM information_schema.columns WHERE table_name = $1 AND column_name <> 'id'
           AND is_generated = 'NEVER' ORDER BY ordinal_position`,
          [t],
        )
      ).rows.map((r) => r.column_name)
      // the row moves to the other site with the references that carry a site
      const moved: Record<string, string> = {
        site_id: '$2::int',
        area_id: '(SELECT min(id) FROM area WHERE site_id = $2)',
        process_id: '(SELECT min(id) FROM process WHERE site_id = $2)',
        instrument_id: '(SELECT min(id) FROM instrument WHERE site_id = $2)',
        limit_id: '(SELECT max(id) FROM limit_function WHERE site_id = $2)',
        source_id: '(SELECT min(id) FROM reconciliation_source WHERE site_id = $2)',
      }
      const select = cols.map((col) => moved[col] ?? col).join(', ')
      await c.query(
        `INSERT INTO ${t} (${cols.join(', ')}) SELECT ${select} FROM ${t} WHERE site_id = $1 ORDER BY id LIMIT 1`,
        [fhr, smp],
      )
    }
  } finally {
    await c.end()
  }
}

const absent: string[] = []
/** The first id of a table's rows at a site. */
async function firstAt(table: string, siteId: number): Promise<number> {
  const { rows } = await ctx.pool.query<{ id: number }>(
    `SELECT id FROM ${table} WHERE site_id = $1 ORDER BY id LIMIT 1`,
    [siteId],
  )
  if (!rows[0]) absent.push(`${table} at site ${siteId}`)
  return rows[0]?.id ?? MISSING
}

async function fixturesAt(siteId: number, userId: number): Promise<Fixtures> {
  const at = (t: string) => firstAt(t, siteId)
  return {
    siteId,
    areaId: await at('area'),
    processId: await at('process'),
    instrumentId: await at('instrument'),
    limitId: await at('limit_function'),
    changeRequestId: await at('change_request'),
    tripTestId: await at('trip_test'),
    deferralId: await at('test_deferral'),
    bypassId: await at('bypass'),
    handoverId: await at('shift_handover'),
    demandId: await at('demand'),
    alarmStateId: await at('alarm_state'),
    replayId: await at('process_data_upload'),
    importId: await at('import_batch'),
    sourceId: await at('reconciliation_source'),
    findingId: await at('finding'),
    userId,
  }
}

function pathOf(route: AppRoute, f: Fixtures): string {
  const params = CALLS[route.key]?.params?.(f) ?? {}
  return route.path.replace(/:(\w+)/g, (_m, name: string) => {
    if (!(name in params)) throw new Error(`${route.key}: no value for :${name}`)
    return String(params[name])
  })
}

/** One call of the route as `who` (null: anonymous) naming the records of `f`. */
async function call(route: AppRoute, who: Role | null, f: Fixtures) {
  const spec = CALLS[route.key] ?? {}
  const agent = who ? agents.get(who)! : anonymous
  const url = pathOf(route, f)
  if (spec.form) {
    const { fields, file } = spec.form(f)
    let req = agent.agent[route.method.toLowerCase() as 'post'](url).set('X-CSRF-Token', agent.csrf)
    for (const [k, v] of Object.entries(fields)) req = req.field(k, v)
    if (file) req = req.attach('file', Buffer.from(file.content), file.name)
    return req
  }
  const body = spec.body?.(f)
  const m = route.method.toLowerCase() as 'post' | 'put' | 'patch' | 'delete'
  return m === 'delete' ? agent.delete(url) : agent[m](url, body)
}

type Answer = { status: number; code: string | undefined }
const answer = (res: { status: number; body: { error?: { code?: string } } }): Answer => ({
  status: res.status,
  code: res.body?.error?.code,
})
/** Refused by authorization: 401, or 403 FORBIDDEN (not a wrong signature password, not a stale CSRF token). */
const refused = (a: Answer) => a.status === 401 || (a.status === 403 && a.code === 'FORBIDDEN')
const passesAt = (access: RouteAccess, role: Role | null) =>
  access.roles === 'anyone' || (role !== null && (access.roles === 'signed-in' || access.roles.includes(role)))

beforeAll(async () => {
  const owner = createDb(ctx.database.ownerUrl, 2).db
  try {
    await seedDemoActivity(owner, ctx.config, ctx.clock)
    await seedDemoShiftHandover(owner, ctx.clock)
    await seedDemoReconciliation(owner, ctx.clock, { port: 1 })
    // one account per role, holding it at Fernhollow only (one argon2 hash for all)
    const hash = await hashPassword(PW)
    const sites = await owner.selectFrom('site').select(['id', 'code']).orderBy('id').execute()
    const fhr = sites.find((s) => s.code === 'FHR')!.id
    const smp = sites.find((s) => s.code === 'SMP')!.id
    const now = ctx.clock.now()
    const userIds: Record<string, number> = {}
    for (const role of ROLES) {
      const { id } = await owner
        .insertInto('app_user')
        .values({
          email: `matrix-${role}@fernhollow.example`,
          display_name: `Matrix ${role}`,
          password_hash: hash,
          created_at: now,
          updated_at: now,
        })
        .returning('id')
        .executeTakeFirstOrThrow()
      await owner.insertInto('role_assignment').values({ user_id: id, site_id: fhr, role }).execute()
      userIds[role] = id
    }
    // a user of each site to rename (operators of one site only)
    const smpOnly = await owner
      .insertInto('app_user')
      .values({
        email: 'matrix-smp@fernhollow.example',
        display_name: 'SMP',
        password_hash: hash,
        created_at: now,
        updated_at: now,
      })
      .returning('id')
      .executeTakeFirstOrThrow()
    await owner.insertInto('role_assignment').values({ user_id: smpOnly.id, site_id: smp, role: 'operator' }).execute()
    app = createApp(ctx, { serveClient: false })
    await completeFixtures(app, fhr, smp, userIds.admin)
    routes = mutatingRoutes(app)
    anonymous = new ApiAgent(app)
    await anonymous.refreshCsrf()
    for (const role of ROLES) {
      const a = new ApiAgent(app)
      await a.signIn(`matrix-${role}@fernhollow.example`, PW)
      agents.set(role, a)
    }
    fixtures.own = await fixturesAt(fhr, userIds.operator)
    fixtures.other = await fixturesAt(smp, smpOnly.id)
    fixtures.missing = Object.fromEntries(Object.keys(fixtures.other).map((k) => [k, MISSING])) as never
    fixtures.missing.siteId = smp
    if (absent.length) throw new Error(`the matrix needs: ${absent.join(', ')}`)
  } finally {
    await owner.destroy()
  }
}, 300_000)

describe('authorization matrix', () => {
  it('lists every mutating route of the app in the table, and nothing the app does not have', () => {
    const keys = routes.map((r) => r.key)
    expect(keys.length).toBeGreaterThan(50)
    expect(keys.filter((k) => !(k in ROUTE_ACCESS))).toEqual([])
    expect(Object.keys(ROUTE_ACCESS).filter((k) => !keys.includes(k))).toEqual([])
    expect(keys.filter((k) => !(k in CALLS))).toEqual([])
  })

  it('answers every route × role at its own site, at the other site, and anonymous as the table says', async () => {
    const wrong: string[] = []
    const check = (route: AppRoute, who: string, got: Answer, ok: boolean, expected: string) => {
      if (got.status >= 500 || !ok)
        wrong.push(`${route.key} as ${who}: got ${got.status} ${got.code ?? ''}, expected ${expected}`)
    }
    // signing out last; refusals first for every route (they write nothing), then the calls that pass
    const ordered = [...routes].sort(
      (a, b) => Number(a.key === 'DELETE /api/session') - Number(b.key === 'DELETE /api/session'),
    )
    for (const route of ordered) {
      const access = ROUTE_ACCESS[route.key]
      const anon = answer(await call(route, null, fixtures.own))
      check(
        route,
        'anonymous',
        anon,
        passesAt(access, null) ? !refused(anon) : anon.status === 401,
        passesAt(access, null) ? 'to pass' : '401',
      )
      for (const role of ROLES) {
        if (route.key === 'DELETE /api/session') continue
        const other = answer(await call(route, role, fixtures.other))
        if (access.otherSite === 'missing') {
          const missing = answer(await call(route, role, fixtures.missing))
          check(
            route,
            `${role} at the other site`,
            other,
            other.status === missing.status && other.code === missing.code,
            `as for a missing id (${missing.status} ${missing.code ?? ''})`,
          )
          // a role that may do this nowhere is refused before any record is looked up: 403 for both, nothing told
          if (missing.status === 403 && passesAt(access, role))
            wrong.push(`${route.key} as ${role}: a missing id answers 403`)
        } else if (access.otherSite === 403) {
          check(route, `${role} at the other site`, other, other.status === 403 && other.code === 'FORBIDDEN', '403')
        } else if (!passesAt(access, role)) {
          check(route, `${role} at the other site`, other, other.status === 403, '403')
        }
        if (!passesAt(access, role)) {
          const own = answer(await call(route, role, fixtures.own))
          check(route, `${role} at its own site`, own, own.status === 403 && own.code === 'FORBIDDEN', '403')
        }
      }
    }
    for (const route of ordered) {
      const access = ROUTE_ACCESS[route.key]
      for (const role of ROLES) {
        if (!passesAt(access, role) || access.roles === 'anyone') continue
        const own = answer(await call(route, role, fixtures.own))
        check(route, `${role} at its own site`, own, !refused(own), 'to pass authorization')
      }
    }
    expect(wrong).toEqual([])
  }, 600_000)
})

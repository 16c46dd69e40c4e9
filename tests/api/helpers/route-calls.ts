// How each state-changing route is called in the route-wide tests (authorization matrix, fuzz): the records it names
// at a site and a body that gets past validation where one is parsed before authorization, and the records those
// calls need at both demo sites.
import type { Express } from 'express'
import pg from 'pg'
import { DEMO_PASSWORD } from '../../../server/seed/demo.ts'
import { ApiAgent } from './agent.ts'
import { heaterThermocouple, heaterTripBody, mvSourceTest } from './factories.ts'
import type { AppRoute } from './routes.ts'

/** The password of the route tests' own accounts (and of their signatures). */
export const PW = 'matrix-account-password-7'
/** An id that exists nowhere (int32 max, a valid id). */
export const MISSING = 2_147_483_647

/** The records a call names, at one site. */
export interface Fixtures {
  siteId: number
  areaId: number
  processId: number
  instrumentId: number
  limitId: number
  changeRequestId: number
  proposalId: number
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

export interface CallSpec {
  params?: (f: Fixtures) => Record<string, number | string>
  body?: (f: Fixtures) => Record<string, unknown>
  /** multipart: form fields and one file */
  form?: (f: Fixtures) => { fields: Record<string, string>; file: { name: string; content: string } | null }
}

const sign = { password: PW }
const tripTest = (f: Fixtures) =>
  mvSourceTest(f.limitId, {
    calibratorDueDate: '2030-12-31',
    performedAt: '2026-09-07T04:30:00Z',
    finalElementOk: true,
    latchHeld: true,
    noTrip: true,
  })
const csv = (content: string) => ({ name: 'file.csv', content })

/** How each route is called: the ids it names and a body that gets past validation where one is parsed first. */
export const CALLS: Record<string, CallSpec> = {
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
    body: (f) => heaterThermocouple(f.processId, `TT-M${Math.floor(Math.random() * 1e6)}`),
  },
  'PATCH /api/instruments/:id': { params: (f) => ({ id: f.instrumentId }), body: () => ({}) },
  'POST /api/limits': {
    body: (f) =>
      heaterTripBody(f.processId, [f.instrumentId], `TSHH-M${Math.floor(Math.random() * 1e6)}`, {
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
  'POST /api/history-imports': {
    form: (f) => ({ fields: { siteId: String(f.siteId) }, file: csv('Record,Limit tag\n') }),
  },
  'POST /api/history-imports/:id/commit': { params: (f) => ({ id: f.importId }), body: () => ({}) },
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
  'POST /api/bypasses/:id/activation': {
    params: (f) => ({ id: f.bypassId }),
    body: () => ({ measuresInPlace: true, shownToOperator: true }),
  },
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
  'POST /api/change-proposals': {
    body: (f) => ({ siteId: f.siteId, limitId: f.limitId, title: 'Matrix proposal', reason: 'Spurious trips' }),
  },
  'POST /api/change-proposals/:id/take-up': {
    params: (f) => ({ id: f.proposalId }),
    body: (f) => ({ changeRequestId: f.changeRequestId }),
  },
  'POST /api/change-proposals/:id/decline': {
    params: (f) => ({ id: f.proposalId }),
    body: () => ({ reason: 'Covered by the high alarm' }),
  },
  'PATCH /api/change-requests/:id': { params: (f) => ({ id: f.changeRequestId }), body: () => ({}) },
  'POST /api/change-requests/:id/submission': { params: (f) => ({ id: f.changeRequestId }) },
  'POST /api/change-requests/:id/withdrawal': { params: (f) => ({ id: f.changeRequestId }) },
  'POST /api/change-requests/:id/approvals': { params: (f) => ({ id: f.changeRequestId }), body: () => sign },
  'POST /api/change-requests/:id/reviews': {
    params: (f) => ({ id: f.changeRequestId }),
    body: () => ({ discipline: 'instrumentation', comment: 'Ranges and tags checked', ...sign }),
  },
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
  'POST /api/audit-events/verify': { body: () => ({}) },
  'POST /api/demands/failure-rates/change-request': {
    body: (f) => ({ limitId: f.limitId, deviceKind: 'limit_controller', model: 'LC-1' }),
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

const TABLES = [
  'area',
  'process',
  'instrument',
  'limit_function',
  'change_request',
  'change_proposal',
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
export async function completeFixtures(ownerUrl: string, app: Express, fhr: number, smp: number, adminId: number) {
  const c = new pg.Client({ connectionString: ownerUrl })
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
    if (!(await has('change_proposal', fhr)))
      await c.query(
        `INSERT INTO change_proposal (site_id, title, reason, proposer_id, created_at)
         VALUES ($1, 'Raise the trip by 10 °C', 'Spurious trips at start-up', $2, now())`,
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
    /** The demo's shift supervisor hands over the first area of the site, as it stands. */
    const handOverFirstArea = async (siteId: number) => {
      const sup = new ApiAgent(app)
      await sup.signIn('supervisor@fernhollow.example', DEMO_PASSWORD)
      const area = (await c.query(`SELECT id FROM area WHERE site_id = $1 ORDER BY id LIMIT 1`, [siteId])).rows[0].id
      const state = await sup.get(`/api/shift-handovers/state?areaId=${area}`).expect(200)
      await sup.created('/api/shift-handovers', {
        areaIds: [area],
        stateHash: state.body.stateHash,
        password: DEMO_PASSWORD,
      })
    }
    if (!(await has('shift_handover', fhr))) {
      await handOverFirstArea(fhr)
    }
    if (!(await has('shift_handover', smp))) {
      // the demo's supervisor works at Fernhollow; for this handover they are given Saltmarsh too
      const supId = (await c.query(`SELECT id FROM app_user WHERE email = 'supervisor@fernhollow.example'`)).rows[0].id
      await c.query(`INSERT INTO role_assignment (user_id, site_id, role) VALUES ($1, $2, 'shift_supervisor')`, [
        supId,
        smp,
      ])
      await handOverFirstArea(smp)
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

/** The first row of each table at a site (MISSING, and the table named in `absent`, where there is none). */
export async function fixturesAt(
  pool: pg.Pool,
  siteId: number,
  userId: number,
  absent: string[] = [],
): Promise<Fixtures> {
  const at = async (table: string): Promise<number> => {
    const { rows } = await pool.query<{ id: number }>(
      `SELECT id FROM ${table} WHERE site_id = $1 ORDER BY id LIMIT 1`,
      [siteId],
    )
    if (!rows[0]) absent.push(`${table} at site ${siteId}`)
    return rows[0]?.id ?? MISSING
  }
  return {
    siteId,
    areaId: await at('area'),
    processId: await at('process'),
    instrumentId: await at('instrument'),
    limitId: await at('limit_function'),
    changeRequestId: await at('change_request'),
    proposalId: await at('change_proposal'),
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

/** The path of a route with the records of `f` in its parameters. */
export function pathOf(route: AppRoute, f: Fixtures): string {
  const params = CALLS[route.key]?.params?.(f) ?? {}
  return route.path.replace(/:(\w+)/g, (_m, name: string) => {
    if (!(name in params)) throw new Error(`${route.key}: no value for :${name}`)
    return String(params[name])
  })
}

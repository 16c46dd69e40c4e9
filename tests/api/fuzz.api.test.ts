// Property-based fuzzing of the API with fast-check (fixed seed, bounded runs): every mutating route read from the
// router stack, with path ids and bodies generated around the call of tests/api/helpers/route-calls.ts (each field
// of the same type with edge values, of another type, or left out; unknown fields; NUL bytes, lone surrogates, deep
// nesting, ids past int32), and every list with query parameters named by the zod list schemas of shared/schemas/.
// Asserted for every answer: never a 5xx; and on a refusal (4xx) nothing written: the row counts of the main tables
// and the audit head are unchanged (docs/security.md, "Input validation"). A wrong password at a signature or a
// sign-in is itself recorded (an audit event and a counted attempt, docs/security.md, "Sign-in"); for those answers
// only the audit head may move.
import type { Express } from 'express'
import fc from 'fast-check'
import { beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { createDb } from '../../server/db/index.ts'
import { hashPassword } from '../../server/features/session/passwords.ts'
import { seedDemoActivity } from '../../server/seed/demo-activity.ts'
import * as alarms from '../../shared/schemas/alarms.ts'
import * as bypasses from '../../shared/schemas/bypasses.ts'
import * as changeProposals from '../../shared/schemas/change-proposals.ts'
import * as changeRequests from '../../shared/schemas/change-requests.ts'
import * as common from '../../shared/schemas/common.ts'
import * as demands from '../../shared/schemas/demands.ts'
import * as reconciliation from '../../shared/schemas/reconciliation.ts'
import * as register from '../../shared/schemas/register.ts'
import * as shiftHandover from '../../shared/schemas/shift-handover.ts'
import * as tripTests from '../../shared/schemas/trip-tests.ts'
import { ROLES } from '../../shared/schemas/users.ts'
import { ApiAgent } from './helpers/agent.ts'
import { CALLS, fixturesAt, PW, type Fixtures } from './helpers/route-calls.ts'
import { appRoutes, mutatingRoutes, type AppRoute } from './helpers/routes.ts'
import { useTestDb } from './helpers/test-db.ts'

const ctx = useTestDb({ register: true })
const SEED = 20261203
const RUNS_PER_ROUTE = 5
const RUNS_PER_LIST = 3

/** Tables whose row counts must not move on a refused request, and the audit head. */
const TABLES = [
  'app_user',
  'role_assignment',
  'site',
  'area',
  'process',
  'instrument',
  'limit_function',
  'limit_revision',
  'import_batch',
  'change_request',
  'change_request_item',
  'change_proposal',
  'signature',
  'attachment',
  'trip_test',
  'test_deferral',
  'limit_degradation',
  'bypass',
  'demand',
  'shift_handover',
  'alarm_state',
  'alarm_journal_upload',
  'process_data_upload',
  'reconciliation_source',
  'reconciliation_run',
  'finding',
  'mail_outbox',
]

let app: Express
let agent: ApiAgent
let anonymous: ApiAgent
let fixtures: Fixtures

async function snapshot() {
  const { rows } = await ctx.pool.query(
    `SELECT ${TABLES.map((t) => `(SELECT count(*) FROM ${t}) AS ${t}`).join(', ')},
            (SELECT coalesce(max(id), 0) FROM audit_event) AS audit_head`,
  )
  return rows[0] as Record<string, string>
}

// ---- arbitraries ----

const oddText = fc.constantFrom('', ' ', '\u0000', 'a\u0000b', '\ud800', 'x\udfff', '=cmd|calc', '💥', 'x'.repeat(3000))
const oddNumber = fc.constantFrom(0, -1, 2_147_483_648, -2_147_483_649, 1e308, -0, 0.5, Number.MAX_SAFE_INTEGER)
const deep = fc.integer({ min: 50, max: 2000 }).map((n) => {
  let v: unknown = 1
  for (let i = 0; i < n; i++) v = { a: v }
  return v
})
/** Any value of another kind than the field expects. */
const anything: fc.Arbitrary<unknown> = fc.oneof(
  fc.constant(null),
  fc.boolean(),
  oddNumber,
  oddText,
  fc.string({ maxLength: 30 }),
  fc.array(fc.integer(), { maxLength: 3 }),
  fc.dictionary(fc.string({ maxLength: 8 }), fc.string({ maxLength: 8 }), { maxKeys: 3 }),
  deep,
)

/** Values around a sample value: the sample, others of its type with edge values, or anything else. */
function around(sample: unknown): fc.Arbitrary<unknown> {
  if (Array.isArray(sample))
    return fc.oneof(
      fc.array(sample.length ? around(sample[0]) : anything, { maxLength: 4 }),
      fc.constant(sample),
      anything,
    )
  if (sample !== null && typeof sample === 'object') {
    const fields = Object.fromEntries(Object.entries(sample).map(([k, v]) => [k, around(v)]))
    return fc.oneof(
      { weight: 5, arbitrary: fc.record(fields, { requiredKeys: [] }) },
      {
        weight: 1,
        arbitrary: fc
          .tuple(fc.record(fields), fc.dictionary(fc.string({ maxLength: 12 }), anything, { maxKeys: 3 }))
          .map(([a, b]) => ({ ...b, ...a })),
      },
      { weight: 1, arbitrary: anything },
    )
  }
  if (typeof sample === 'string')
    return fc.oneof(
      fc.constant(sample),
      fc.string({ maxLength: 40 }),
      fc.string({ unit: 'binary', maxLength: 20 }),
      oddText,
      anything,
    )
  if (typeof sample === 'number')
    return fc.oneof(
      fc.constant(sample),
      fc.integer(),
      fc.double({ noNaN: true, noDefaultInfinity: true }),
      oddNumber,
      anything,
    )
  if (typeof sample === 'boolean') return fc.oneof(fc.boolean(), anything)
  return anything
}

/** A path id: the fixture's, another small one, or one no id schema takes. */
const pathId = (real: number) =>
  fc.oneof(
    fc.constant(String(real)),
    fc.integer({ min: 1, max: 5000 }).map(String),
    fc.constantFrom('0', '-1', '2147483648', '99999999999999999999', '1e3', 'abc', '%00', '%F0%9F%92%A5', '1.5'),
  )

/** Query parameter names of every list schema of shared/schemas/ (zod objects' shapes). */
function listParameterNames(): string[] {
  const names = new Set<string>()
  for (const mod of [
    alarms,
    bypasses,
    changeProposals,
    changeRequests,
    common,
    demands,
    reconciliation,
    register,
    shiftHandover,
    tripTests,
  ])
    for (const [exportName, value] of Object.entries(mod))
      if (exportName.endsWith('QuerySchema') && value && typeof value === 'object' && 'shape' in value)
        for (const key of Object.keys((value as { shape: object }).shape)) names.add(key)
  return [...names]
}

const queryValue = fc.oneof(
  fc.integer({ min: -3, max: 300 }).map(String),
  fc.constantFrom('', 'true', 'false', '2026-01-01', '2026-13-45T99:00:00Z', 'tag', 'setpoint:desc', 'x;DROP', '%00'),
  fc.string({ maxLength: 20 }),
  fc.constantFrom('2147483648', '-1', 'NaN', 'Infinity', 'eyJpZCI6MX0', '9'.repeat(30)),
)

function queryOf(names: string[]) {
  return fc
    .array(fc.tuple(fc.constantFrom(...names, 'unknownParam'), queryValue), { maxLength: 5 })
    .map((pairs) => pairs.map(([k, v]) => `${encodeURIComponent(k)}=${encodeURIComponent(v)}`).join('&'))
}

// ---- calls ----

async function send(route: AppRoute, url: string, body: unknown, form: boolean) {
  const who = route.key === 'POST /api/session' ? anonymous : agent
  const m = route.method.toLowerCase() as 'post' | 'put' | 'patch' | 'delete'
  if (form) {
    const fields: Record<string, string> = {}
    if (body && typeof body === 'object')
      for (const [k, v] of Object.entries(body)) fields[k] = typeof v === 'string' ? v : (JSON.stringify(v) ?? '')
    return who.upload(url, fields, { name: 'file.csv', content: 'tag,setpoint\nTSHH-1,780\n' }, m)
  }
  // the body as JSON text whatever its kind (supertest would send a bare string as a form)
  return who.agent[m](url)
    .set('X-CSRF-Token', who.csrf)
    .set('Content-Type', 'application/json')
    .send(body === undefined ? '' : JSON.stringify(body))
}

beforeAll(async () => {
  const owner = createDb(ctx.database.ownerUrl, 2).db
  try {
    await seedDemoActivity(owner, ctx.config, ctx.clock)
    // one account holding every role at both sites: most calls get past authorization to the input checks
    const hash = await hashPassword(PW)
    const now = ctx.clock.now()
    const sites = await owner.selectFrom('site').select(['id', 'code']).execute()
    const { id } = await owner
      .insertInto('app_user')
      .values({
        email: 'fuzz@fernhollow.example',
        display_name: 'Fuzz',
        password_hash: hash,
        created_at: now,
        updated_at: now,
      })
      .returning('id')
      .executeTakeFirstOrThrow()
    await owner
      .insertInto('role_assignment')
      .values(sites.flatMap((s) => ROLES.map((role) => ({ user_id: id, site_id: s.id, role }))))
      .execute()
    app = createApp(ctx, { serveClient: false })
    agent = new ApiAgent(app)
    await agent.signIn('fuzz@fernhollow.example', PW)
    anonymous = new ApiAgent(app)
    await anonymous.refreshCsrf()
    fixtures = await fixturesAt(ctx.pool, sites.find((s) => s.code === 'FHR')!.id, id)
  } finally {
    await owner.destroy()
  }
}, 300_000)

describe('fuzzing every mutating route and every list', () => {
  it('never answers 5xx, and writes nothing on a refused request', async () => {
    const failures: string[] = []
    const answers: Record<string, number> = {}
    // the state after one call is the state before the next
    let state = await snapshot()
    // signing out would end the fuzzing session; the clock route only exists under tests
    const routes = mutatingRoutes(app).filter((r) => !['DELETE /api/session', 'POST /api/test/clock'].includes(r.key))
    expect(routes.length).toBeGreaterThan(50)
    for (const route of routes) {
      const spec = CALLS[route.key]
      expect(spec, `${route.key} has no call in tests/api/helpers/route-calls.ts`).toBeDefined()
      const sample = spec.body?.(fixtures) ?? spec.form?.(fixtures).fields ?? {}
      const ids = spec.params?.(fixtures) ?? {}
      const params = fc.record(
        Object.fromEntries(
          Object.entries(ids).map(([k, v]) => [k, typeof v === 'number' ? pathId(v) : fc.constant(v)]),
        ),
      )
      await fc.assert(
        fc.asyncProperty(params, around(sample), async (p, body) => {
          const url = route.path.replace(/:(\w+)/g, (_m, name: string) => String((p as Record<string, string>)[name]))
          const before = state
          const res = await send(route, url, body, !!spec.form)
          const after = await snapshot()
          state = after
          const kind = `${Math.floor(res.status / 100)}xx`
          answers[kind] = (answers[kind] ?? 0) + 1
          const code = res.body?.error?.code as string | undefined
          const seen = `${route.key} ${url} ${JSON.stringify(body)?.slice(0, 300)} → ${res.status} ${code ?? ''}`
          if (res.status >= 500) failures.push(seen)
          else if (res.status >= 400) {
            const recorded = code === 'SIGNATURE_INVALID' || code === 'INVALID_CREDENTIALS' || code === 'RATE_LIMITED'
            const moved = Object.keys(before).filter((k) => before[k] !== after[k] && !(recorded && k === 'audit_head'))
            if (moved.length) failures.push(`${seen}: wrote ${moved.join(', ')}`)
          }
          return true
        }),
        { seed: SEED, numRuns: RUNS_PER_ROUTE, endOnFailure: true },
      )
    }
    const names = listParameterNames()
    expect(names).toEqual(expect.arrayContaining(['page', 'pageSize', 'sort', 'q', 'siteId']))
    const lists = appRoutes(app).filter((r) => r.method === 'GET' && !r.path.includes(':') && r.path !== '/api/health')
    for (const list of lists) {
      await fc.assert(
        fc.asyncProperty(queryOf(names), async (query) => {
          const res = await agent.get(`${list.path}?${query}`)
          if (res.status >= 500) failures.push(`GET ${list.path}?${query} → ${res.status}`)
          return true
        }),
        { seed: SEED, numRuns: RUNS_PER_LIST },
      )
    }
    expect(failures).toEqual([])
    // the generated calls reach both refusals and writes (not only the first input check)
    expect(answers['2xx']).toBeGreaterThan(0)
    expect(answers['4xx']).toBeGreaterThan(0)
  }, 600_000)
})

// `npm run bench:register`: the register list API under load, next to a bare Express + pg handler on the same data.
// Starts a throwaway PostgreSQL cluster (temporary folder, free port, no fsync), migrates it, seeds the demo plant,
// bulk-inserts 100,000 limits with SQL, then drives `GET /api/limits` (a filtered, sorted page of 50) at 16 concurrent
// clients and prints latency percentiles and requests per second. Prints figures only: the exit code is 0 whether the
// target is met or not, and non-zero only when the benchmark itself fails. Not part of `npm test`.
//
// The register screen's pages are kept per process until the register changes (docs/architecture.md, "The register
// list query"), so after the first request for each page the figures are those of a kept page; one more run asks
// only pages not asked before and prints what a page read from PostgreSQL costs. The request log is at warn. The
// requests come from a load generator in a child process (tests/bench/http-load.ts; BENCH_CLIENT=inline drives from
// this process, as the script did before 3 December 2026).
//
// Knobs: BENCH_LIMITS (100000), BENCH_CONCURRENCY (16), BENCH_SECONDS (10 per target), BENCH_SQL (statements run as the
// owner after the bulk insert, to try a candidate index before writing its migration); `-- --explain` prints whole plans.
import { execFile } from 'node:child_process'
import { readdir, readFile } from 'node:fs/promises'
import type { Server } from 'node:http'
import os from 'node:os'
import { performance } from 'node:perf_hooks'
import { promisify } from 'node:util'
import express from 'express'
import { Kysely, PostgresDialect } from 'kysely'
import pg from 'pg'
import { loadConfig } from '../../server/config.ts'
import type { Database } from '../../server/db/schema.ts'
import {
  countLimits,
  LIMIT_SORT_COLUMNS,
  type LimitFilters,
  listRegisterRows,
} from '../../server/features/register/limits.repository.ts'
import { startServer, type RunningServer } from '../../server/index.ts'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { freePort } from '../../server/dev/free-port.ts'
import { logger } from '../../server/logger.ts'
import { runAsScript, seedDemoPlant, startCluster } from './harness.ts'
import { drive, type LoadResult, type Sample } from './http-load.ts'

const run = promisify(execFile)

const BULK_LIMITS = Number(process.env.BENCH_LIMITS ?? 100_000)
const CONCURRENCY = Number(process.env.BENCH_CONCURRENCY ?? 16)
const DURATION_MS = Number(process.env.BENCH_SECONDS ?? 10) * 1000
const WARMUP_MS = 1500
const PAGE_SIZE = 50
const TARGET_P95_MS = 50
const TARGET_RATIO = 5

const seconds = (ms: number) => `${(ms / 1000).toFixed(2)} s`

/**
 * Bulk register rows straight in SQL: 1,000 processes over every area of both sites, one instrument per two limits
 * (temperature, pressure, level, flow), each carrying an alarm and a trip on the same side. Values are plausible and
 * nested like a real operating window; about 8 % of the trips are SIL-rated, 3 % carry a range-end warning; statuses
 * are mostly active, some proposed, a few retired.
 */
export async function bulkInsert(ownerUrl: string, limits: number) {
  const c = new pg.Client({ connectionString: ownerUrl })
  await c.connect()
  try {
    await c.query('BEGIN')
    await c.query('SELECT setseed(0.4242)')
    await c.query(`
      CREATE TEMP TABLE bench_process ON COMMIT DROP AS
      WITH areas AS (SELECT id, site_id, row_number() OVER (ORDER BY id) - 1 AS k, count(*) OVER () AS n FROM area),
      ins AS (
        INSERT INTO process (area_id, site_id, name, description, created_at, updated_at)
        SELECT a.id, a.site_id, 'Bench unit U-' || lpad(g::text, 4, '0'), 'generated for the register benchmark', now(), now()
        FROM generate_series(1, 1000) g JOIN areas a ON a.k = g % a.n
        RETURNING id, area_id, site_id
      )
      SELECT id, area_id, site_id, row_number() OVER (ORDER BY id) - 1 AS n FROM ins`)
    const instruments = Math.ceil(limits / 2)
    await c.query(
      `
      CREATE TEMP TABLE bench_instrument ON COMMIT DROP AS
      WITH src AS (
        SELECT g, g % 4 AS v, (ARRAY[600, 40, 100, 200])[g % 4 + 1]::numeric AS hi FROM generate_series(1, $1::int) g
      ),
      ins AS (
        INSERT INTO instrument (process_id, area_id, site_id, tag, measured_variable, unit, pressure_reference, range_low, range_high,
          normal_low, normal_high, design_low, design_high, burnout, signal, device_kind, device_description, created_at, updated_at)
        SELECT p.id, p.area_id, p.site_id,
          (ARRAY['TT', 'PT', 'LT', 'FT'])[v + 1] || '-' || (100000 + g),
          (ARRAY['temperature', 'pressure', 'level', 'flow'])[v + 1],
          (ARRAY['°C', 'bar', '%', 'm³/h'])[v + 1],
          CASE WHEN v = 1 THEN 'gauge' END,
          0, hi, round(hi * 0.30, 1), round(hi * 0.55, 1), NULL, CASE WHEN v < 2 THEN round(hi * 0.9, 1) END,
          CASE WHEN v = 0 THEN 'upscale' ELSE 'downscale' END,
          (CASE v
            WHEN 0 THEN CASE WHEN g % 8 = 0 THEN '{"kind":"rtd","element":"Pt100","wires":3,"headTransmitter":false}' ELSE '{"kind":"thermocouple","tcType":"K","headTransmitter":true}' END
            WHEN 3 THEN '{"kind":"current","sqrtExtraction":true}'
            ELSE CASE WHEN g % 10 = 0 THEN '{"kind":"switch"}' ELSE '{"kind":"current","sqrtExtraction":false}' END
          END)::jsonb,
          CASE WHEN g % 3 = 0 THEN 'safety_plc' WHEN g % 10 = 0 THEN 'switch' ELSE 'control_system' END,
          'bench instrument', now(), now()
        FROM src JOIN bench_process p ON p.n = (g - 1) % 1000
        RETURNING id, tag, range_high, normal_low, normal_high, measured_variable
      )
      SELECT *, row_number() OVER (ORDER BY id) AS n FROM ins`,
      [instruments],
    )
    await c.query(
      `
      WITH src AS (
        SELECT g, (g + 1) / 2 AS i, g % 2 = 0 AS is_trip, random()::numeric AS r1, random()::numeric AS r2, random()::numeric AS r3 FROM generate_series(1, $1::int) g
      ),
      rows AS (
        SELECT s.*, bi.id AS instrument_id, bi.range_high AS hi, bi.normal_low AS nlo, bi.normal_high AS nhi, bi.measured_variable AS mv,
          bi.tag AS itag, bi.n % 3 <> 0 AS high
        FROM src s JOIN bench_instrument bi ON bi.n = s.i
      ),
      vals AS (
        SELECT r.*,
          CASE
            WHEN is_trip AND r3 < 0.03 AND high THEN round(hi * 0.96, 1)
            WHEN high AND is_trip THEN round(nhi + hi * (0.15 + 0.1 * r1), 1)
            WHEN high THEN round(nhi + hi * (0.04 + 0.05 * r1), 1)
            WHEN is_trip THEN round(nlo - hi * (0.15 + 0.04 * r1), 1)
            ELSE round(nlo - hi * (0.04 + 0.05 * r1), 1)
          END AS sp,
          CASE WHEN is_trip AND r2 < 0.08 THEN 1 + floor(r2 * 1000)::int % 3 END AS sil
        FROM rows r
      )
      INSERT INTO limit_function (process_id, area_id, site_id, primary_instrument_id, tag, description, direction, limit_class, setpoint,
        deadband, on_delay_sec, latching, reset_role, bad_value_trip, action, consequence, operator_response, response_time_min, severity,
        priority, priority_explanation, analytical_limit, process_safety_time_sec, required_response_time_sec, bypass_permitted,
        max_bypass_hours, compensating_measures, test_interval_months, code_set_interval, sil, subsystems, status, window_warnings,
        created_at, updated_at)
      SELECT i.process_id, i.area_id, i.site_id, v.instrument_id,
        left(v.itag, 1) || CASE WHEN v.is_trip THEN 'S' || CASE WHEN v.high THEN 'HH' ELSE 'LL' END ELSE 'A' || CASE WHEN v.high THEN 'H' ELSE 'L' END END
          || substr(v.itag, position('-' in v.itag)),
        initcap(v.mv) || ' ' || CASE WHEN v.high THEN 'high' ELSE 'low' END || CASE WHEN v.is_trip THEN ' trip' ELSE ' alarm' END || ' on bench unit',
        CASE WHEN v.high THEN 'high' ELSE 'low' END,
        CASE WHEN v.is_trip THEN 'trip' ELSE 'alarm' END,
        v.sp, round(v.hi * 0.005, 2), 0, v.is_trip, CASE WHEN v.is_trip THEN 'operator' END, v.is_trip,
        CASE WHEN v.is_trip THEN 'Stop the unit feed' ELSE '' END, 'Loss of containment', CASE WHEN v.is_trip THEN '' ELSE 'Bring the value back to normal' END,
        CASE WHEN v.is_trip THEN NULL ELSE (ARRAY[2, 5, 10, 20])[1 + floor(v.r1 * 4)::int] END,
        (ARRAY['minor', 'moderate', 'major', 'severe'])[1 + floor(v.r2 * 4)::int],
        CASE WHEN v.is_trip THEN NULL ELSE (ARRAY['low', 'medium', 'high', 'critical'])[1 + floor(v.r3 * 4)::int] END, '',
        CASE WHEN v.is_trip THEN v.sp + CASE WHEN v.high THEN 1 ELSE -1 END * round(v.hi * 0.03, 1) END,
        CASE WHEN v.is_trip THEN 60 + floor(v.r1 * 540) END, CASE WHEN v.is_trip THEN 10 END, true,
        CASE WHEN v.is_trip THEN 8 END,
        CASE WHEN v.is_trip THEN '["Operator watches the process value on the control system"]' ELSE '[]' END::jsonb,
        (ARRAY[6, 12, 24, 36])[1 + (v.g / 2) % 4], false, v.sil,
        CASE WHEN v.sil IS NULL THEN '[]' ELSE '[{"role":"sensor","architecture":"1oo2","lambdaDu":1e-6,"beta":0.1,"mttrHours":24,"testIntervalMonths":12,"testCoverage":0.9,"missionTimeYears":15},{"role":"logic","architecture":"1oo1","lambdaDu":1e-7,"beta":0.02,"mttrHours":8,"testIntervalMonths":24,"testCoverage":0.95,"missionTimeYears":15},{"role":"final_element","architecture":"1oo2","lambdaDu":2e-6,"beta":0.1,"mttrHours":48,"testIntervalMonths":12,"testCoverage":0.85,"missionTimeYears":15}]' END::jsonb,
        CASE WHEN v.r3 < 0.85 THEN 'active' WHEN v.r3 < 0.97 THEN 'proposed' ELSE 'retired' END,
        CASE WHEN v.is_trip AND v.r3 < 0.03 AND v.high THEN '[{"code":"SETPOINT_NEAR_RANGE_END","field":"setpoint","message":"setpoint + tolerance comes within 5 % of span of range high"}]' ELSE '[]' END::jsonb,
        now(), now()
      FROM vals v JOIN instrument i ON i.id = v.instrument_id`,
      [limits],
    )
    await c.query(`
      INSERT INTO limit_instrument (limit_id, position, instrument_id)
      SELECT lf.id, 0, lf.primary_instrument_id FROM limit_function lf
      WHERE NOT EXISTS (SELECT 1 FROM limit_instrument li WHERE li.limit_id = lf.id)`)
    await c.query('COMMIT')
    // BENCH_SQL: statements to try before writing a migration (e.g. a candidate index); run as the owner
    if (process.env.BENCH_SQL) await c.query(process.env.BENCH_SQL)
    // VACUUM as autovacuum would have by now: sets the visibility map, so index-only scans work as in steady state
    await c.query('VACUUM (ANALYZE)')
    const { rows } = await c.query<{ site: string; n: number }>(
      `SELECT s.code AS site, count(*)::int AS n FROM limit_function lf JOIN site s ON s.id = lf.site_id GROUP BY s.code ORDER BY s.code`,
    )
    return rows
  } catch (err) {
    await c.query('ROLLBACK').catch(() => {})
    throw err
  } finally {
    await c.end()
  }
}

/** Signs in over HTTP like the client does: the CSRF token from GET /api/session, then POST /api/session. */
export async function signIn(baseUrl: string, email: string): Promise<string> {
  const first = await fetch(`${baseUrl}/api/session`)
  const { csrfToken } = (await first.json()) as { csrfToken: string }
  let cookie = (first.headers.get('set-cookie') ?? '').split(';')[0]
  const res = await fetch(`${baseUrl}/api/session`, {
    method: 'POST',
    headers: { 'content-type': 'application/json', 'x-csrf-token': csrfToken, cookie },
    body: JSON.stringify({ email, password: DEMO_PASSWORD }),
  })
  if (res.status !== 201) throw new Error(`sign-in failed: ${res.status} ${await res.text()}`)
  cookie = (res.headers.get('set-cookie') ?? cookie).split(';')[0]
  await res.arrayBuffer()
  return cookie
}

/** The naive handler: OFFSET paging plus a full count(*), one query after the other, no session. */
async function startNaive(appUrl: string): Promise<{ url: string; close(): Promise<void> }> {
  const pool = new pg.Pool({ connectionString: appUrl, max: 20 })
  const app = express()
  app.get('/limits', async (req, res, next) => {
    try {
      const page = Math.max(1, Number(req.query.page ?? 1))
      const q = typeof req.query.q === 'string' ? req.query.q : null
      const filterParams = q ? [`%${q}%`] : []
      const where = `site_id = 1 AND limit_class = 'trip'${q ? ' AND tag ILIKE $1' : ''}`
      const items = await pool.query(
        `SELECT * FROM limit_function WHERE ${where} ORDER BY setpoint DESC OFFSET $${filterParams.length + 1} LIMIT ${PAGE_SIZE}`,
        [...filterParams, (page - 1) * PAGE_SIZE],
      )
      const total = await pool.query(`SELECT count(*)::int AS n FROM limit_function WHERE ${where}`, filterParams)
      res.json({ items: items.rows, total: total.rows[0].n })
    } catch (err) {
      next(err)
    }
  })
  const port = await freePort()
  const server: Server = await new Promise((resolve) => {
    const s = app.listen(port, '127.0.0.1', () => resolve(s))
  })
  return {
    url: `http://127.0.0.1:${port}`,
    async close() {
      server.closeAllConnections()
      await new Promise<void>((resolve) => server.close(() => resolve()))
      await pool.end()
    },
  }
}

/** A request mix: four in five are plain register pages 1–5, one in five a text search (`q=tshh`) on pages 1–3. */
function pickRequest(n: number): { variant: string; query: string } {
  if (n % 5 === 4) return { variant: 'search q=tshh', query: `q=tshh&page=${1 + (n % 3)}` }
  return { variant: 'filtered page', query: `page=${1 + (n % 5)}` }
}

/** The register screen's sortable columns (shared with the repository), each asked ascending and descending. */
const SORT_FIELDS = Object.keys(LIMIT_SORT_COLUMNS)
function pickSortRequest(field: string) {
  return (n: number) => ({
    variant: `sort ${field}`,
    query: `sort=${n % 2 ? '-' : ''}${field}&page=${1 + (n % 3)}`,
  })
}

/** CPU time (ms) PostgreSQL has used so far: the postmaster, the processes it runs now and those it has reaped. */
async function clusterCpuMs(): Promise<number> {
  if (!postmaster) return NaN
  let ticks = 0
  for (const name of await readdir('/proc')) {
    if (!/^\d+$/.test(name)) continue
    const stat = await readFile(`/proc/${name}/stat`, 'utf8').catch(() => '')
    // the fields after the command's closing parenthesis, from field 3 (state) on: proc(5)
    const f = stat.slice(stat.lastIndexOf(')') + 2).split(' ')
    if (Number(name) === postmaster) ticks += Number(f[11]) + Number(f[12]) + Number(f[13]) + Number(f[14])
    else if (Number(f[1]) === postmaster) ticks += Number(f[11]) + Number(f[12])
  }
  return (ticks * 1000) / clockTicks
}
let postmaster = 0
let clockTicks = 100

/** The PostgreSQL postmaster's process id: the parent of a backend (proc(5), field 4). */
async function postmasterOf(url: string): Promise<number> {
  const c = new pg.Client({ connectionString: url })
  await c.connect()
  try {
    const { rows } = await c.query<{ pid: number }>('SELECT pg_backend_pid() AS pid')
    const stat = await readFile(`/proc/${rows[0].pid}/stat`, 'utf8').catch(() => '')
    return Number(stat.slice(stat.lastIndexOf(')') + 2).split(' ')[1]) || 0
  } finally {
    await c.end()
  }
}

/** CPU milliseconds per answered request: this process (the server), PostgreSQL and the load generator. */
interface CpuPerRequest {
  app: number
  pg: number
  client: number
}
type Driven = LoadResult & { cpu: CpuPerRequest }

/**
 * Drives `clients` loops of requests from the load generator (tests/bench/http-load.ts): request n is `pick(n)`, for
 * n up to `distinct` (then they come round again). Also measures the CPU time each side spent per request.
 */
async function driveMix(
  urlFor: (query: string) => string,
  headers: Record<string, string>,
  clients: number,
  durationMs: number,
  pick: (n: number) => { variant: string; query: string } = pickRequest,
  distinct = 60,
): Promise<Driven> {
  const requests = Array.from({ length: distinct }, (_, n) => {
    const { variant, query } = pick(n)
    return { variant, url: urlFor(query) }
  })
  const app0 = process.cpuUsage()
  const pg0 = await clusterCpuMs()
  const r = await drive({ requests, headers, clients, warmupMs: WARMUP_MS, durationMs })
  const app = process.cpuUsage(app0)
  const pg = (await clusterCpuMs()) - pg0
  const n = Math.max(1, r.answered)
  return { ...r, cpu: { app: (app.user + app.system) / 1000 / n, pg: pg / n, client: r.clientCpuMs / n } }
}

function percentile(sorted: number[], p: number): number {
  if (!sorted.length) return NaN
  return sorted[Math.min(sorted.length - 1, Math.ceil((p / 100) * sorted.length) - 1)]
}

interface Figures {
  rps: number
  p50: number
  p95: number
  p99: number
}
function figures(samples: Sample[], completed: number, elapsedMs: number): Figures {
  const ms = samples.map((s) => s.ms).sort((a, b) => a - b)
  return {
    rps: completed / (elapsedMs / 1000),
    p50: percentile(ms, 50),
    p95: percentile(ms, 95),
    p99: percentile(ms, 99),
  }
}

function row(label: string, a: Figures, b: Figures) {
  const f = (v: number) => (Number.isFinite(v) ? v.toFixed(1) : '–').padStart(10)
  console.log(
    `  ${label.padEnd(24)}${f(a.rps)}${f(a.p50)}${f(a.p95)}${f(a.p99)}   │${f(b.rps)}${f(b.p50)}${f(b.p95)}${f(b.p99)}`,
  )
}

/**
 * EXPLAIN ANALYZE of the SQL the register API runs for the benchmark's requests, captured from the repository functions
 * themselves (list page and capped count, plain and with the text search). `full` prints whole plans, otherwise the
 * execution time and the plan's top nodes.
 */
async function explainAppQueries(appUrl: string, full: boolean) {
  const pool = new pg.Pool({ connectionString: appUrl, max: 1 })
  const captured: { sql: string; parameters: readonly unknown[] }[] = []
  const db = new Kysely<Database>({
    dialect: new PostgresDialect({ pool }),
    log: (e) => {
      if (e.level === 'query') captured.push({ sql: e.query.sql, parameters: e.query.parameters })
    },
  })
  try {
    const f: LimitFilters = { siteIds: [1], limitClass: ['trip'] }
    const cases: { label: string; run: () => Promise<unknown> }[] = [
      {
        label: 'list page 1',
        run: () => listRegisterRows(db, f, [{ field: 'setpoint', desc: true }], { limit: PAGE_SIZE, offset: 0 }),
      },
      {
        label: 'list page 5',
        run: () =>
          listRegisterRows(db, f, [{ field: 'setpoint', desc: true }], { limit: PAGE_SIZE, offset: 4 * PAGE_SIZE }),
      },
      { label: 'capped count', run: () => countLimits(db, f, 10_000) },
      {
        label: 'search list page 1',
        run: () =>
          listRegisterRows(db, { ...f, q: 'tshh' }, [{ field: 'setpoint', desc: true }], {
            limit: PAGE_SIZE,
            offset: 0,
          }),
      },
      { label: 'search capped count', run: () => countLimits(db, { ...f, q: 'tshh' }, 10_000) },
    ]
    console.log("\nEXPLAIN ANALYZE of the register API's queries (siteId=1, limitClass=trip, sort=-setpoint):")
    for (const c of cases) {
      captured.length = 0
      await c.run()
      const q = captured[0]
      const { rows } = await pool.query<{ 'QUERY PLAN': string }>(
        `EXPLAIN (ANALYZE, BUFFERS) ${q.sql}`,
        q.parameters as unknown[],
      )
      const lines = rows.map((r) => r['QUERY PLAN'])
      const time = lines.find((l) => l.startsWith('Execution Time')) ?? ''
      const gist = lines
        .filter((l) => /Scan on|Scan using|Sort Method|Sort Key/.test(l))
        .slice(0, 4)
        .map((l) =>
          l
            .trim()
            .replace(/^->\s*/, '')
            .replace(/\s+\(cost=.*$/, '')
            .replace(/\s+\(actual.*$/, ''),
        )
      console.log(
        `  ${c.label.padEnd(22)}${time.replace('Execution Time: ', '').padStart(12)}   ${full ? '' : gist.join(' · ')}`,
      )
      if (full) {
        console.log(`    ${q.sql}`)
        for (const l of lines) console.log(`    ${l}`)
      }
    }
  } finally {
    await db.destroy()
  }
}

async function main() {
  // the figures, not a log line per request (LOG_LEVEL=info writes them, and costs the app a write per request)
  logger.level = process.env.LOG_LEVEL ?? 'warn'
  const cleanups: (() => Promise<void>)[] = []
  const cleanup = async () => {
    for (const c of cleanups.reverse()) await c().catch((e) => console.error(e instanceof Error ? e.message : e))
    cleanups.length = 0
  }
  process.once('SIGINT', () => {
    void cleanup().then(() => process.exit(130))
  })
  try {
    console.log(
      `Register benchmark: ${BULK_LIMITS.toLocaleString('en')} limits, ${CONCURRENCY} clients, ${DURATION_MS / 1000} s per target (${os.cpus().length} CPUs, Node ${process.version}, load generator ${process.env.BENCH_CLIENT === 'inline' ? 'in this process' : 'in a child process'})`,
    )
    let t = performance.now()
    const cluster = await startCluster()
    cleanups.push(() => cluster.stop())
    console.log(`  cluster started and migrated   ${seconds(performance.now() - t)}`)

    t = performance.now()
    await seedDemoPlant(cluster.ownerUrl)
    console.log(`  demo plant seeded              ${seconds(performance.now() - t)}`)

    t = performance.now()
    const perSite = await bulkInsert(cluster.ownerUrl, BULK_LIMITS)
    console.log(
      `  bulk insert + ANALYZE          ${seconds(performance.now() - t)}  (${perSite.map((r) => `${r.site} ${r.n.toLocaleString('en')}`).join(', ')} limits)`,
    )

    const config = loadConfig({ NODE_ENV: 'development', PORT: '0', DATABASE_URL: cluster.appUrl, SMTP_PORT: '1' })
    const server: RunningServer = await startServer(config, { runJobs: false })
    cleanups.push(() => server.close())
    const cookie = await signIn(server.url, 'engineer@fernhollow.example')
    const naive = await startNaive(cluster.appUrl)
    postmaster = await postmasterOf(cluster.appUrl)
    clockTicks = Number((await run('getconf', ['CLK_TCK'])).stdout.trim()) || 100
    cleanups.push(() => naive.close())

    // the register screen's own request: its filters, a sort, a page of 50 and its slim rows
    const base = 'siteId=1&limitClass=trip&pageSize=50&view=row'
    const probe = await fetch(`${server.url}/api/limits?${base}&sort=-setpoint&page=1`, { headers: { cookie } })
    const probeBody = (await probe.json()) as { items: unknown[]; total: number; totalCapped: boolean }
    if (probe.status !== 200 || probeBody.items.length !== PAGE_SIZE)
      throw new Error(`the register API did not answer a full page: ${probe.status}`)
    console.log(`  GET /api/limits?${base}: total ${probeBody.total}${probeBody.totalCapped ? '+' : ''}`)

    await explainAppQueries(cluster.appUrl, process.argv.includes('--explain'))

    console.log(
      `\nDriving the register API (${CONCURRENCY} clients, ${DURATION_MS / 1000} s after ${WARMUP_MS / 1000} s warm-up)…`,
    )
    const appRun = await driveMix(
      (q) => `${server.url}/api/limits?${base}&sort=-setpoint&${q}`,
      { cookie },
      CONCURRENCY,
      DURATION_MS,
    )
    console.log('Driving the bare Express + pg handler…')
    const naiveRun = await driveMix((q) => `${naive.url}/limits?${q}`, {}, CONCURRENCY, DURATION_MS)

    console.log('Driving GET /api/health (one SELECT 1, no session): the ceiling of this machine for HTTP + one query…')
    const healthRun = await driveMix(() => `${server.url}/api/health`, {}, CONCURRENCY, Math.max(2000, DURATION_MS / 2))

    const sortSeconds = Math.max(2, DURATION_MS / 4000)
    console.log(`Driving the register API sorted by each sortable column (${sortSeconds} s each)…`)
    const sortRuns: { field: string; run: Driven }[] = []
    for (const field of SORT_FIELDS) {
      const run = await driveMix(
        (q) => `${server.url}/api/limits?${base}&${q}`,
        { cookie },
        CONCURRENCY,
        sortSeconds * 1000,
        pickSortRequest(field),
      )
      sortRuns.push({ field, run })
    }

    // every request a page no request asked before (sort field and direction in turn, from page 6 on, past the pages
    // the runs above asked), so the register's page cache never answers: the cost of a page read from PostgreSQL
    console.log(`Driving the register API with pages not asked before (${sortSeconds} s)…`)
    const coldRun = await driveMix(
      (q) => `${server.url}/api/limits?${base}&${q}`,
      { cookie },
      CONCURRENCY,
      sortSeconds * 1000,
      (n) => {
        const field = SORT_FIELDS[Math.floor(n / 2) % SORT_FIELDS.length]
        return {
          variant: 'pages not kept',
          query: `sort=${n % 2 ? '-' : ''}${field}&page=${6 + Math.floor(n / (2 * SORT_FIELDS.length))}`,
        }
      },
      5000,
    )

    const app = figures(appRun.samples, appRun.completed, appRun.elapsedMs)
    const bare = figures(naiveRun.samples, naiveRun.completed, naiveRun.elapsedMs)
    const head = (s: string) => s.padStart(10)
    console.log(
      `\n  ${''.padEnd(24)}${head('req/s')}${head('p50 ms')}${head('p95 ms')}${head('p99 ms')}   │${head('req/s')}${head('p50 ms')}${head('p95 ms')}${head('p99 ms')}`,
    )
    console.log(`  ${''.padEnd(24)}${'  register API (full app)'.padEnd(40)}   │  bare Express + pg (OFFSET, count(*))`)
    row('all requests', app, bare)
    // requests/s of a variant: its share of the recorded samples times the total rate
    const part = (r: LoadResult, variant: string) => {
      const mine = r.samples.filter((s) => s.variant === variant)
      return figures(mine, r.samples.length ? r.completed * (mine.length / r.samples.length) : 0, r.elapsedMs)
    }
    for (const variant of ['filtered page', 'search q=tshh'])
      row(variant, part(appRun, variant), part(naiveRun, variant))
    console.log(
      `  errors: register API ${appRun.errors}${appRun.firstError ? ` (first: ${appRun.firstError})` : ''}, bare handler ${naiveRun.errors}${naiveRun.firstError ? ` (first: ${naiveRun.firstError})` : ''}`,
    )
    const health = figures(healthRun.samples, healthRun.completed, healthRun.elapsedMs)
    console.log(
      `  ceiling, GET /api/health: ${health.rps.toFixed(1)} req/s, p50 ${health.p50.toFixed(1)} ms, p95 ${health.p95.toFixed(1)} ms; load average ${os
        .loadavg()
        .map((l) => l.toFixed(1))
        .join(' ')} on ${os.cpus().length} CPUs`,
    )
    console.log(`\n  sorted by (asc and desc, pages 1–3)       req/s    p50 ms    p95 ms    p99 ms   errors`)
    const sortFigures = sortRuns.map(({ field, run }) => {
      const fig = figures(run.samples, run.completed, run.elapsedMs)
      const f = (v: number) => (Number.isFinite(v) ? v.toFixed(1) : '–').padStart(10)
      console.log(
        `  ${field.padEnd(36)}${f(fig.rps)}${f(fig.p50)}${f(fig.p95)}${f(fig.p99)}${String(run.errors).padStart(9)}`,
      )
      return { field, fig, errors: run.errors }
    })
    const cold = figures(coldRun.samples, coldRun.completed, coldRun.elapsedMs)
    const f1 = (v: number) => (Number.isFinite(v) ? v.toFixed(1) : '–').padStart(10)
    console.log(
      `  ${'pages not asked before'.padEnd(36)}${f1(cold.rps)}${f1(cold.p50)}${f1(cold.p95)}${f1(cold.p99)}${String(coldRun.errors).padStart(9)}   (no page cache hit; not a target)`,
    )
    // CPU time per request does not depend much on how busy the machine is, unlike requests/s and latency
    const ms = (v: number) => (Number.isFinite(v) ? v.toFixed(2) : '–').padStart(12)
    console.log(`\n  CPU ms per request                   app process  PostgreSQL  load generator`)
    const cpuRow = (label: string, c: CpuPerRequest) =>
      console.log(`  ${label.padEnd(36)}${ms(c.app)}${ms(c.pg)}${ms(c.client)}`)
    cpuRow('register API (page and search)', appRun.cpu)
    cpuRow('bare Express + pg handler', naiveRun.cpu)
    cpuRow('GET /api/health', healthRun.cpu)
    const sortTotal = sortRuns.reduce((t, { run }) => t + run.answered, 0)
    const sortCpu = (k: keyof CpuPerRequest) =>
      sortRuns.reduce((t, { run }) => t + run.cpu[k] * run.answered, 0) / Math.max(1, sortTotal)
    cpuRow('register API, every sort', { app: sortCpu('app'), pg: sortCpu('pg'), client: sortCpu('client') })
    cpuRow('pages not asked before', coldRun.cpu)
    const serverCpu = (c: CpuPerRequest) => c.app + c.pg
    console.log(
      `  server CPU (app + PostgreSQL) of the bare handler per register API request: ${(serverCpu(naiveRun.cpu) / serverCpu(appRun.cpu)).toFixed(2)}× (the ratio a machine with CPU to spare only for the server would give; not the target)`,
    )

    const ratio = app.rps / bare.rps
    console.log(`\n  throughput ratio register API / bare handler: ${ratio.toFixed(2)}×`)
    for (const variant of ['filtered page', 'search q=tshh']) {
      const p95 = part(appRun, variant).p95
      console.log(
        `  ${p95 <= TARGET_P95_MS ? 'PASS' : 'FAIL'}  ${variant}: p95 ${p95.toFixed(1)} ms (target ≤ ${TARGET_P95_MS} ms)`,
      )
    }
    for (const { field, fig, errors } of sortFigures) {
      const ok = fig.p95 <= TARGET_P95_MS && errors === 0
      console.log(
        `  ${ok ? 'PASS' : 'FAIL'}  sort ${field}: p95 ${fig.p95.toFixed(1)} ms (target ≤ ${TARGET_P95_MS} ms)${errors ? `, ${errors} errors` : ''}`,
      )
    }
    console.log(
      `  ${ratio >= TARGET_RATIO ? 'PASS' : 'FAIL'}  ${ratio.toFixed(2)}× the bare handler's requests/s (target ≥ ${TARGET_RATIO}×)`,
    )
  } finally {
    await cleanup()
  }
}

// the cluster and bulk-insert helpers can also be imported for ad-hoc analysis
runAsScript(import.meta.url, main)

// `npm run bench:schedule`: the trip-test schedule job at 100,000 limits. Starts a throwaway PostgreSQL cluster (as
// `npm run bench:register` does), seeds the demo plant, bulk-inserts the limits and one signed passing full test per
// active limit (performed at random over the last interval and a half, so every status occurs), then times the job's
// refresh: once with every active limit marked for refresh (what the migration leaves behind), on an ordinary hour
// of the same day, and on each of the next seven days. Target (docs/domain/due-dates.md, "The schedule job"): the job
// touches only the limits whose status the calendar changes that day, found by a query on the due dates. Prints
// figures and PASS/FAIL; exit code 0 either way, non-zero only when the benchmark itself fails. Not part of `npm test`.
//
// Knobs: BENCH_LIMITS (100000).
import os from 'node:os'
import { performance } from 'node:perf_hooks'
import pg from 'pg'
import { createDb } from '../../server/db/index.ts'
import { refreshChangedSchedules } from '../../server/features/trip-tests/trip-tests.jobs.ts'
import { runAsScript, seedDemoPlant, startCluster } from './harness.ts'
import { bulkInsert } from './register.bench.ts'

const BULK_LIMITS = Number(process.env.BENCH_LIMITS ?? 100_000)
const NOW = new Date('2026-12-02T09:00:00Z')
const DAY = 86_400_000

/** One signed passing full test per active limit, performed at random within the last 1.5 intervals. */
async function insertTests(ownerUrl: string) {
  const c = new pg.Client({ connectionString: ownerUrl })
  await c.connect()
  try {
    await c.query('SELECT setseed(0.17)')
    const { rowCount } = await c.query(
      `
      INSERT INTO trip_test (limit_id, site_id, limit_revision, kind, method, performed_at, setpoint, tolerance,
        tolerance_unit, tolerance_eu, as_found, as_found_result, as_left, as_left_result, passed, status, content_hash,
        recorded_by, created_at, updated_at)
      SELECT lf.id, lf.site_id, lf.revision, 'full', 'injection',
        $1::timestamptz - make_interval(secs => random() * lf.test_interval_months * 1.5 * 30.4 * 86400),
        lf.setpoint, 1, 'eu', 1, lf.setpoint, 'in_tolerance', lf.setpoint, 'in_tolerance', true, 'signed',
        repeat('0', 64), (SELECT min(id) FROM app_user), $1::timestamptz, $1::timestamptz
      FROM limit_function lf WHERE lf.status = 'active'`,
      [NOW],
    )
    await c.query(`UPDATE limit_function SET test_status_changes_on = DATE '2000-01-01' WHERE status = 'active'`)
    await c.query('ANALYZE limit_function; ANALYZE trip_test')
    return rowCount ?? 0
  } finally {
    await c.end()
  }
}

async function main() {
  console.log(
    `Schedule job benchmark: ${BULK_LIMITS.toLocaleString('en')} limits (${os.cpus().length} CPUs, Node ${process.version})`,
  )
  const cluster = await startCluster()
  try {
    await seedDemoPlant(cluster.ownerUrl)
    await bulkInsert(cluster.ownerUrl, BULK_LIMITS)
    const tests = await insertTests(cluster.ownerUrl)
    console.log(`  ${tests.toLocaleString('en')} active limits, one signed passing full test each`)

    const { db } = createDb(cluster.appUrl, 4)
    try {
      const changing = async (at: Date) =>
        Number(
          (
            await db
              .selectFrom('limit_function')
              .select((eb) => eb.fn.countAll<string>().as('n'))
              .where('status', '=', 'active')
              .where('test_status_changes_on', '<=', at.toISOString().slice(0, 10))
              .executeTakeFirstOrThrow()
          ).n,
        )
      const timed = async (label: string, at: Date) => {
        const expected = await changing(at)
        const t = performance.now()
        const refreshed = await refreshChangedSchedules(db, at)
        const ms = performance.now() - t
        console.log(
          `  ${label.padEnd(34)} ${refreshed.toLocaleString('en').padStart(7)} refreshed  ${ms.toFixed(0).padStart(6)} ms`,
        )
        return { refreshed, expected, ms }
      }
      const first = await timed('first run (every limit marked)', NOW)
      // ANALYZE as autovacuum would after so many updates: the planner then knows the column's spread
      const analyze = new pg.Client({ connectionString: cluster.ownerUrl })
      await analyze.connect()
      await analyze.query('ANALYZE limit_function').finally(() => analyze.end())
      const hour = await timed('same day, an hour later', new Date(NOW.getTime() + 3_600_000))
      const days = []
      for (let d = 1; d <= 7; d++) days.push(await timed(`day ${d}`, new Date(NOW.getTime() + d * DAY)))
      const mean = days.reduce((s, x) => s + x.ms, 0) / days.length
      const meanRefreshed = days.reduce((s, x) => s + x.refreshed, 0) / days.length
      const onlyChanged =
        first.refreshed === tests &&
        hour.refreshed === 0 &&
        days.every((x) => x.refreshed === x.expected && x.refreshed < tests / 20)
      console.log(
        `\n  daily run: ${meanRefreshed.toFixed(0)} limits refreshed on average, ${mean.toFixed(0)} ms ` +
          `(first run ${(first.ms / 1000).toFixed(1)} s for all ${tests.toLocaleString('en')})`,
      )
      console.log(
        `  target: touches only the limits whose status changes that day (every marked one on the first run, none ` +
          `an hour later, each day's due ones and fewer than 5 % of the limits on a day)  ${onlyChanged ? 'PASS' : 'FAIL'}`,
      )
    } finally {
      await db.destroy()
    }
  } finally {
    await cluster.stop()
  }
}

runAsScript(import.meta.url, main)

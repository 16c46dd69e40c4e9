// npm run bench:alarms — alarm journal import, figures and replay benchmarks (not part of npm test). A throwaway
// cluster with the demo plant; prints figures and PASS/FAIL against the targets, and exits 0 either way.
//   1. import of a generated 5-million-row journal CSV through the product's upload job: rows/s and the peak
//      resident memory of this Node process while it runs;
//   2. the 30-day figures over a year of 10 million journal events (the import plus 5 million inserted in SQL);
//   3. the replay state machine over 10 million samples: samples/s.
// Knobs: BENCH_ROWS (default 5,000,000), BENCH_EVENTS (10,000,000), BENCH_SAMPLES (10,000,000).
import { createWriteStream } from 'node:fs'
import { mkdtemp, rm, stat } from 'node:fs/promises'
import os from 'node:os'
import path from 'node:path'
import { performance } from 'node:perf_hooks'
import { once } from 'node:events'
import { replayLimit } from '../../shared/domain/alarm-limit-state.ts'
import { createDb } from '../../server/db/index.ts'
import { alarmFigures } from '../../server/features/alarms/alarm-figures.service.ts'
import { startJournalUpload } from '../../server/features/alarms/alarm-journals.service.ts'
import { seedDemo } from '../../server/seed/demo.ts'
import { demoEngineer, startCluster } from './harness.ts'

const ROWS = Number(process.env.BENCH_ROWS ?? 5_000_000)
const EVENTS = Number(process.env.BENCH_EVENTS ?? 10_000_000)
const SAMPLES = Number(process.env.BENCH_SAMPLES ?? 10_000_000)
const TARGET = { importRowsPerSec: 100_000, figuresMs: 2000, replaySamplesPerSec: 5_000_000, memoryMb: 300 }
const YEAR_START = Date.UTC(2025, 0, 1)
const YEAR_MS = 365 * 86_400_000

const verdict = (ok: boolean) => (ok ? 'PASS' : 'FAIL')
const fmt = (n: number) => Math.round(n).toLocaleString('en-US')

/** A journal CSV of `rows` rows spread over one year: 400 tags, 3 positions, active/return/acknowledged events. */
async function writeJournal(file: string, rows: number) {
  const out = createWriteStream(file)
  const events = ['ACTIVE', 'RTN', 'ACK']
  const prios = ['low', 'low', 'low', 'low', 'medium', 'high']
  let chunk = 'timestamp,tag,event,priority,position,message\n'
  for (let i = 0; i < rows; i++) {
    const t = new Date(YEAR_START + Math.floor((i / rows) * YEAR_MS)).toISOString().slice(0, 23).replace('T', ' ')
    chunk += `${t},TAG-${(i * 7919) % 400},${events[i % 3]},${prios[i % 6]},CON-${i % 3},bench row ${i}\n`
    if (chunk.length > 1 << 20) {
      if (!out.write(chunk)) await once(out, 'drain')
      chunk = ''
    }
  }
  out.end(chunk)
  await once(out, 'finish')
}

async function main() {
  console.log(`Alarm benchmarks: ${fmt(ROWS)} journal rows, ${fmt(EVENTS)} events, ${fmt(SAMPLES)} samples`)
  const cluster = await startCluster()
  const dir = await mkdtemp(path.join(os.tmpdir(), 'limitkeeper-bench-alarms-'))
  const owner = createDb(cluster.ownerUrl, 2)
  const app = createDb(cluster.appUrl, 10)
  try {
    await seedDemo(owner.db)
    const { deps, user, roles, ability } = await demoEngineer(app, cluster.appUrl)
    const site = roles[0].siteId

    // 1. import
    const file = path.join(dir, 'journal.csv')
    const g0 = performance.now()
    await writeJournal(file, ROWS)
    const size = (await stat(file)).size
    console.log(
      `generated ${(size / 1024 / 1024).toFixed(0)} MB CSV in ${((performance.now() - g0) / 1000).toFixed(1)} s`,
    )
    global.gc?.()
    let peak = process.memoryUsage().rss
    const sampler = setInterval(() => (peak = Math.max(peak, process.memoryUsage().rss)), 50)
    const t0 = performance.now()
    const upload = await startJournalUpload(
      deps,
      ability,
      { actorId: user.id, requestId: 'bench', ip: null },
      user.id,
      { path: file, fileName: 'journal.csv' },
      { siteId: site, timeZone: 'UTC' },
    )
    let row = await app.db
      .selectFrom('alarm_journal_upload')
      .selectAll()
      .where('id', '=', upload.id)
      .executeTakeFirstOrThrow()
    while (row.status === 'queued' || row.status === 'running') {
      await new Promise((r) => setTimeout(r, 200))
      row = await app.db
        .selectFrom('alarm_journal_upload')
        .selectAll()
        .where('id', '=', upload.id)
        .executeTakeFirstOrThrow()
    }
    const importSec = (performance.now() - t0) / 1000
    clearInterval(sampler)
    if (row.status !== 'done') throw new Error(`import failed: ${row.error}`)
    const rowsPerSec = ROWS / importSec
    const peakMb = peak / 1024 / 1024

    // 2. a year of EVENTS events, then the last 30 days' figures
    const more = EVENTS - Number(row.rows_stored)
    if (more > 0) {
      await owner.pool.query(
        `INSERT INTO alarm_event (site_id, occurred_at, tag, kind, priority, position, message, upload_id, row_hash)
         SELECT $1, to_timestamp($2::float8 / 1000.0 + ((g - 1)::float8 / $3::int) * $4::float8 / 1000.0 + 0.5), 'TAG-' || (g::bigint * 104729 % 400),
           (g % 3)::smallint, (CASE WHEN g % 6 = 5 THEN 2 WHEN g % 6 = 4 THEN 1 ELSE 0 END)::smallint,
           'CON-' || (g % 3), '', $5, md5('extra' || g)::uuid
         FROM generate_series(1, $3::int) g`,
        [site, YEAR_START, more, YEAR_MS, upload.id],
      )
    }
    await owner.pool.query('ANALYZE alarm_event')
    const total = Number((await owner.pool.query('SELECT count(*) AS n FROM alarm_event')).rows[0].n)
    const to = new Date(YEAR_START + YEAR_MS).toISOString()
    const from = new Date(YEAR_START + YEAR_MS - 30 * 86_400_000).toISOString()
    const times: number[] = []
    let annunciated = 0
    for (let i = 0; i < 3; i++) {
      const f0 = performance.now()
      const f = await alarmFigures(deps, ability, { siteId: site, from, to })
      times.push(performance.now() - f0)
      annunciated = f.annunciated
    }
    const figuresMs = [...times].sort((a, b) => a - b)[1]

    // 3. replay over SAMPLES samples at 1 s: a noisy value wandering across a high alarm at 80
    const t = new Float64Array(SAMPLES)
    const v = new Float64Array(SAMPLES)
    let seed = 42
    for (let i = 0; i < SAMPLES; i++) {
      seed = (seed * 1103515245 + 12345) & 0x7fffffff
      t[i] = i
      v[i] = 78 + 3 * Math.sin(i / 600) + (seed / 0x7fffffff - 0.5)
    }
    const settings = {
      direction: 'high' as const,
      setpoint: 80,
      deadband: 0.5,
      onDelaySec: 5,
      offDelaySec: 10,
      latching: false,
    }
    replayLimit(t.subarray(0, 100_000), v.subarray(0, 100_000), settings) // warm-up
    const r0 = performance.now()
    const result = replayLimit(t, v, settings)
    const replaySec = (performance.now() - r0) / 1000
    const samplesPerSec = SAMPLES / replaySec

    console.log('')
    console.log(
      `journal import      ${fmt(rowsPerSec)} rows/s (${fmt(ROWS)} rows in ${importSec.toFixed(1)} s; stored ${fmt(Number(row.rows_stored))}) ` +
        `target ≥ ${fmt(TARGET.importRowsPerSec)}  ${verdict(rowsPerSec >= TARGET.importRowsPerSec)}`,
    )
    console.log(
      `import memory peak  ${peakMb.toFixed(0)} MB resident (this Node process)  target ≤ ${TARGET.memoryMb} MB  ${verdict(peakMb <= TARGET.memoryMb)}`,
    )
    console.log(
      `30-day figures      ${figuresMs.toFixed(0)} ms median of 3 (${times.map((x) => x.toFixed(0)).join(', ')} ms) over ${fmt(total)} events, ` +
        `${fmt(annunciated)} annunciations in the period  target ≤ ${TARGET.figuresMs} ms  ${verdict(figuresMs <= TARGET.figuresMs)}`,
    )
    console.log(
      `replay              ${fmt(samplesPerSec)} samples/s (${fmt(SAMPLES)} samples in ${replaySec.toFixed(2)} s, ` +
        `${result.activations.length} activations)  target ≥ ${fmt(TARGET.replaySamplesPerSec)}  ${verdict(samplesPerSec >= TARGET.replaySamplesPerSec)}`,
    )
  } finally {
    await app.db.destroy()
    await owner.db.destroy()
    await rm(dir, { recursive: true, force: true })
    await cluster.stop()
  }
}

main().then(
  () => process.exit(0),
  (err) => {
    console.error(err instanceof Error ? (err.stack ?? err.message) : err)
    process.exit(1)
  },
)

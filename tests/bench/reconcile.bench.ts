// npm run bench:reconcile — reconciliation benchmarks (not part of npm test). A throwaway cluster with the demo plant;
// prints figures and PASS/FAIL against the targets, and exits 0 either way.
//   1. an export of 500,000 attribute rows (five per limit: setpoint, deadband, on-delay, latching, bypass flag)
//      reconciled against 100,000 active limits of one site with the product's code from the CSV bytes on: UTF-8
//      decoding, CSV parsing, column mapping, reading the rows, the comparison, findings, each limit's last
//      reconciliation, the run and its audit event. Such a file (about 11 MB) is over the upload's 5 MB cap, so the
//      benchmark calls the steps below the cap instead of uploadExport; 0.1 % of the setpoints differ, so 100
//      findings are written. Timed twice: the first run, and the same file again (findings already on record);
//   2. register reads per second against the simulated Modbus device over one connection, with the product's
//      read-only client: single-register reads (function code 3, the demo limiter at unit 1, addresses 0–4), one
//      after another, then 8 in flight.
// Knobs: BENCH_LIMITS (100000), BENCH_READ_SECONDS (5).
import { createHash } from 'node:crypto'
import { performance } from 'node:perf_hooks'
import { reconcile } from '../../shared/domain/reconcile.ts'
import { createDb } from '../../server/db/index.ts'
import { startModbusSim } from '../../server/dev/modbus-sim.ts'
import { ReadOnlyModbus } from '../../server/features/reconciliation/modbus-reader.ts'
import { loadRegisterLimits } from '../../server/features/reconciliation/reconciliation.repository.ts'
import { performRun } from '../../server/features/reconciliation/reconciliation-runs.service.ts'
import {
  createSource,
  exportObservations,
} from '../../server/features/reconciliation/reconciliation-sources.service.ts'
import { resolveColumnMapping } from '../../server/features/register/column-mapping.ts'
import { readCsv } from '../../server/features/register/imports.service.ts'
import { EXPORT_COLUMNS, EXPORT_REQUIRED_COLUMNS } from '../../shared/schemas/reconciliation.ts'
import { seedDemo } from '../../server/seed/demo.ts'
import { demoEngineer, runAsScript, startCluster } from './harness.ts'
import { bulkInsert } from './register.bench.ts'

const LIMITS = Number(process.env.BENCH_LIMITS ?? 100_000)
const READ_SECONDS = Number(process.env.BENCH_READ_SECONDS ?? 5)
const TARGET = { reconcileSeconds: 10, readsPerSec: 500 }
const verdict = (ok: boolean) => (ok ? 'PASS' : 'FAIL')
const fmt = (n: number) => Math.round(n).toLocaleString('en-US')

/** The export's own layout mapped to the product's columns by name (docs/reconciliation.md#sources). */
const mapExportHeaders = (headers: string[]) =>
  resolveColumnMapping(
    headers,
    EXPORT_COLUMNS,
    EXPORT_REQUIRED_COLUMNS,
    { Point: 'tag', Parameter: 'attribute', Value: 'value', EU: 'unit' },
    {},
    'map the headers',
  )

async function main() {
  console.log(`Reconciliation benchmarks: ${fmt(LIMITS)} limits, ${fmt(LIMITS * 5)} export rows`)
  const cluster = await startCluster()
  const owner = createDb(cluster.ownerUrl, 2)
  const app = createDb(cluster.appUrl, 10)
  try {
    await seedDemo(owner.db)
    await bulkInsert(cluster.ownerUrl, LIMITS)
    // one site, one area, every limit active: the source of the benchmark holds them all
    const area = await owner.db
      .selectFrom('area')
      .innerJoin('site', 'site.id', 'area.site_id')
      .select(['area.id', 'area.site_id'])
      .where('site.code', '=', 'FHR')
      .orderBy('area.id')
      .executeTakeFirstOrThrow()
    await owner.db.updateTable('process').set({ site_id: area.site_id, area_id: area.id }).execute()
    await owner.db.updateTable('instrument').set({ site_id: area.site_id, area_id: area.id }).execute()
    await owner.db
      .updateTable('limit_function')
      .set({ site_id: area.site_id, area_id: area.id, status: 'active' })
      .execute()
    const limits = await owner.db
      .selectFrom('limit_function as l')
      .innerJoin('instrument as i', 'i.id', 'l.primary_instrument_id')
      .select(['l.tag', 'l.setpoint', 'l.deadband', 'l.on_delay_sec', 'l.latching', 'i.unit'])
      .where('l.site_id', '=', area.site_id)
      .orderBy('l.id')
      .execute()
    console.log(`register: ${fmt(limits.length)} active limits at one site`)

    const { deps, user, ability } = await demoEngineer(app, cluster.appUrl)
    const audit = { actorId: user.id, requestId: 'bench', ip: null }
    const source = await createSource(deps, ability, audit, {
      siteId: area.site_id,
      kind: 'export',
      name: 'Bench control system',
      description: '',
      host: null,
      port: null,
      unitId: null,
      timeoutMs: 3000,
      registerMap: [],
      columnMapping: {},
      areaIds: [area.id],
      tolerances: {},
      scheduleHours: null,
      active: true,
    })

    // the export, in a layout of its own (the columns are mapped by their names)
    const lines = ['Point,Parameter,Value,EU']
    let changed = 0
    limits.forEach((l, k) => {
      const differs = k % 1000 === 0
      if (differs) changed++
      const sp = differs ? String(Number(l.setpoint) + 1) : String(l.setpoint)
      lines.push(
        `${l.tag},SP,${sp},${l.unit}`,
        `${l.tag},DB,${l.deadband},${l.unit}`,
        `${l.tag},ON DELAY,${l.on_delay_sec},s`,
        `${l.tag},LATCH,${l.latching ? 1 : 0},`,
        `${l.tag},BYPASS,0,`,
      )
    })
    const buffer = Buffer.from(lines.join('\n'), 'utf8')
    console.log(`export: ${fmt(lines.length - 1)} rows, ${(buffer.length / 1024 / 1024).toFixed(1)} MB CSV`)

    const timed = async (label: string) => {
      global.gc?.()
      const t0 = performance.now()
      // what uploadExport does after its 5 MB check (docs/reconciliation.md#sources)
      const table = readCsv(new TextDecoder('utf-8', { fatal: true }).decode(buffer))
      const { keys } = mapExportHeaders(table.headers)
      const parsed = exportObservations(table.rows, keys)
      const tParsed = performance.now()
      const run = await performRun(deps, audit, source.id, 'upload', {
        kind: 'export',
        observations: parsed.observations,
        rowsRead: parsed.rows,
        rowsIgnored: parsed.ignored,
        fileName: 'bench-export.csv',
        checksum: createHash('sha256').update(buffer).digest('hex'),
      })
      const s = (performance.now() - t0) / 1000
      console.log(
        `${label}: ${s.toFixed(2)} s (file to observations ${((tParsed - t0) / 1000).toFixed(2)} s, run ` +
          `${((performance.now() - tParsed) / 1000).toFixed(2)} s) — ${fmt(run.rowsRead)} rows read, ${fmt(run.rowsIgnored)} ignored, ` +
          `${fmt(run.limitsCompared)} limits and ${fmt(run.attributesCompared)} values compared, ` +
          `${fmt(run.differences)} differences, ${fmt(run.findingsNew)} new findings`,
      )
      return { s, run }
    }
    {
      const t0 = performance.now()
      const reg = await loadRegisterLimits(app.db, area.site_id)
      const t1 = performance.now()
      const table = readCsv(buffer.toString('utf8'))
      const { keys } = mapExportHeaders(table.headers)
      const obs = exportObservations(table.rows, keys).observations
      const t2 = performance.now()
      reconcile({
        limits: reg,
        observations: obs,
        expectedLimitIds: new Set(reg.map((l) => l.limitId)),
        pending: [],
        tolerances: {},
      })
      const t3 = performance.now()
      console.log(
        `parts: loading the register ${((t1 - t0) / 1000).toFixed(2)} s, the comparison alone ${((t3 - t2) / 1000).toFixed(2)} s`,
      )
    }
    const first = await timed('first upload')
    const second = await timed('same file again')
    const findingsOk = first.run.findingsNew === changed && first.run.limitsCompared === limits.length

    // register reads over one connection
    const sim = await startModbusSim(0, { quiet: true })
    let seq = 0
    let pipelined = 0
    try {
      const conn = await ReadOnlyModbus.connect('127.0.0.1', sim.port, 1, 3000)
      try {
        const until = performance.now() + READ_SECONDS * 1000
        const t0 = performance.now()
        while (performance.now() < until) {
          await conn.read(3, seq % 5, 1)
          seq++
        }
        const seqRate = seq / ((performance.now() - t0) / 1000)
        const until2 = performance.now() + READ_SECONDS * 1000
        const t1 = performance.now()
        await Promise.all(
          Array.from({ length: 8 }, async (_, w) => {
            while (performance.now() < until2) {
              await conn.read(3, w % 5, 1)
              pipelined++
            }
          }),
        )
        const pipeRate = pipelined / ((performance.now() - t1) / 1000)
        console.log('')
        console.log(`Results (${new Date().toISOString().slice(0, 10)}, Node ${process.version})`)
        console.log(
          `  reconcile ${fmt(limits.length)} limits / ${fmt(lines.length - 1)} rows: first ${first.s.toFixed(2)} s, ` +
            `again ${second.s.toFixed(2)} s (target ≤ ${TARGET.reconcileSeconds} s)   ` +
            verdict(Math.max(first.s, second.s) <= TARGET.reconcileSeconds),
        )
        console.log(
          `  findings: ${fmt(first.run.findingsNew)} new for ${fmt(changed)} changed setpoints   ${verdict(findingsOk)}`,
        )
        console.log(
          `  register reads over one connection, one at a time: ${fmt(seqRate)}/s (target ≥ ${TARGET.readsPerSec}/s)   ` +
            verdict(seqRate >= TARGET.readsPerSec),
        )
        console.log(
          `  register reads over one connection, 8 in flight: ${fmt(pipeRate)}/s (target ≥ ${TARGET.readsPerSec}/s)   ` +
            verdict(pipeRate >= TARGET.readsPerSec),
        )
        console.log(`  writes seen by the simulated device: ${sim.writeAttempts.length}`)
      } finally {
        await conn.close()
      }
    } finally {
      await sim.close()
    }
  } finally {
    await app.db.destroy()
    await owner.db.destroy()
    await cluster.stop()
  }
}

runAsScript(import.meta.url, main)

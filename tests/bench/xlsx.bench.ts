// `npm run bench:xlsx`: register uploads of a small workbook with a million rows (the XLSX amplification of
// docs/security.md, "Uploads"). Starts a throwaway PostgreSQL cluster with the demo plant and the server in this
// process, writes an XLSX of 950,000 one-cell rows under the 5 MB upload limit, then uploads it 1 and 8 times at
// once while `GET /api/health` is asked every 25 ms. Prints the answers, the upload times, the peak resident memory of
// the process (process.memoryUsage().rss, sampled every 10 ms) above its level before the uploads, and the health
// latency, with PASS/FAIL against the targets. Exits 0 whether or not the targets are met; non-zero only when the
// benchmark itself fails. Not part of `npm test`.
import { mkdtemp, readFile, rm, stat } from 'node:fs/promises'
import os from 'node:os'
import path from 'node:path'
import ExcelJS from 'exceljs'
import { loadConfig } from '../../server/config.ts'
import { startServer } from '../../server/index.ts'
import { logger } from '../../server/logger.ts'
import { IMPORT_MAX_BYTES } from '../../shared/schemas/imports.ts'
import { runAsScript, seedDemoPlant, startCluster } from './harness.ts'
import { signIn } from './register.bench.ts'

// ExcelJS's writer packs 1,000,000 rows into 5.14 MB, just over the 5 MB upload limit; 950,000 fit under it
const ROWS = 950_000
const TARGET_PEAK_MB = { 1: 150, 8: 400 } as Record<number, number>
const TARGET_HEALTH_MAX_MS = { 1: 250, 8: 1000 } as Record<number, number>
const MB = (n: number) => n / 1024 / 1024

/** A workbook of a header and ROWS one-number rows, written by ExcelJS's streaming writer (no model in memory). */
async function writeWorkbook(file: string) {
  const wb = new ExcelJS.stream.xlsx.WorkbookWriter({
    filename: file,
    useSharedStrings: false,
    useStyles: false,
    zip: { zlib: { level: 9 } },
  })
  const ws = wb.addWorksheet('Register')
  ws.addRow(['Tag']).commit()
  for (let i = 1; i <= ROWS; i++) ws.addRow([1]).commit()
  ws.commit()
  await wb.commit()
}

async function main() {
  // the figures, not a log line per health check
  logger.level = 'warn'
  console.log(`XLSX upload benchmark (${os.cpus().length} CPUs, Node ${process.version})`)
  const dir = await mkdtemp(path.join(os.tmpdir(), 'limitkeeper-xlsx-bench-'))
  const cluster = await startCluster()
  let server: Awaited<ReturnType<typeof startServer>> | null = null
  try {
    const file = path.join(dir, 'million.xlsx')
    await writeWorkbook(file)
    const size = (await stat(file)).size
    console.log(
      `workbook: ${ROWS.toLocaleString('en')} rows, ${MB(size).toFixed(2)} MB (upload limit ${MB(IMPORT_MAX_BYTES)} MB)`,
    )
    if (size > IMPORT_MAX_BYTES)
      throw new Error('the workbook is over the upload limit; the size check would refuse it')
    const content = await readFile(file)

    await seedDemoPlant(cluster.ownerUrl, { register: false })
    const config = loadConfig({ NODE_ENV: 'development', PORT: '0', DATABASE_URL: cluster.appUrl, SMTP_PORT: '1' })
    server = await startServer(config, { runJobs: false })
    const base = server.url
    const cookie = await signIn(base, 'engineer@fernhollow.example')
    const session = (await (await fetch(`${base}/api/session`, { headers: { cookie } })).json()) as {
      csrfToken: string
      user: { roles: { siteId: number }[] }
    }
    const siteId = session.user.roles[0].siteId

    const upload = async () => {
      const form = new FormData()
      form.set('siteId', String(siteId))
      form.set('file', new Blob([content]), 'million.xlsx')
      const started = performance.now()
      const res = await fetch(`${base}/api/imports`, {
        method: 'POST',
        headers: { cookie, 'x-csrf-token': session.csrfToken },
        body: form,
      })
      const body = (await res.json()) as { error?: { message: string } }
      return { status: res.status, ms: performance.now() - started, message: body.error?.message ?? '' }
    }

    let pass = true
    for (const n of [1, 8]) {
      globalThis.gc?.()
      await new Promise((r) => setTimeout(r, 500))
      const baseline = process.memoryUsage().rss
      let peak = baseline
      const sampler = setInterval(() => (peak = Math.max(peak, process.memoryUsage().rss)), 10)
      const health: number[] = []
      let running = true
      const prober = (async () => {
        while (running) {
          const t = performance.now()
          await (await fetch(`${base}/api/health`)).arrayBuffer()
          health.push(performance.now() - t)
          await new Promise((r) => setTimeout(r, 25))
        }
      })()
      const results = await Promise.all(Array.from({ length: n }, upload))
      running = false
      await prober
      clearInterval(sampler)
      health.sort((a, b) => a - b)
      const p95 = health[Math.min(health.length - 1, Math.floor(health.length * 0.95))]
      const max = health[health.length - 1]
      const growth = MB(peak - baseline)
      const statuses = [...new Set(results.map((r) => r.status))].join(', ')
      const slowest = Math.max(...results.map((r) => r.ms))
      console.log(`\n${n} upload${n > 1 ? 's' : ''} at once:`)
      console.log(`  answers: ${statuses} — ${results[0].message}`)
      console.log(`  slowest upload: ${slowest.toFixed(0)} ms`)
      const lines: [boolean, string][] = [
        [results.every((r) => r.status === 400), `  every upload refused with 400`],
        [
          growth <= TARGET_PEAK_MB[n],
          `  peak memory above the level before: ${growth.toFixed(0)} MB (target ≤ ${TARGET_PEAK_MB[n]} MB; rss ${MB(peak).toFixed(0)} MB)`,
        ],
        [
          max <= TARGET_HEALTH_MAX_MS[n],
          `  /api/health: ${health.length} answers, p95 ${p95.toFixed(0)} ms, max ${max.toFixed(0)} ms (target max ≤ ${TARGET_HEALTH_MAX_MS[n]} ms)`,
        ],
      ]
      for (const [ok, text] of lines) {
        console.log(`${ok ? 'PASS' : 'FAIL'} ${text}`)
        pass &&= ok
      }
    }
    console.log(`\n${pass ? 'PASS' : 'FAIL'}: all targets`)
  } finally {
    await server?.close()
    await cluster.stop()
    await rm(dir, { recursive: true, force: true })
  }
}

runAsScript(import.meta.url, main)

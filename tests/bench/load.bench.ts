/// <reference lib="dom" />
// `npm run bench:load`: the first load of the sign-in page and of the register in headless Chromium on loopback.
// Starts a throwaway PostgreSQL cluster with the demo plant and its register, serves the built client (run
// `npm run build` first) and loads each page in a fresh browser context (empty cache) three times. Prints the bytes
// sent by type (as compressed on the wire), the number of requests, the first contentful paint and, for the register,
// the time until 50 rows are on screen, with PASS/FAIL against the targets. Exits 0 whether or not the targets are
// met; non-zero only when the benchmark itself fails. Not part of `npm test`.
import { existsSync } from 'node:fs'
import os from 'node:os'
import type { Browser } from 'playwright-core'
import { loadConfig } from '../../server/config.ts'
import { startServer } from '../../server/index.ts'
import { launchChromium } from '../browser/chromium.ts'
import { logger } from '../../server/logger.ts'
import { runAsScript, seedDemoPlant, startCluster } from './harness.ts'
import { signIn } from './register.bench.ts'

const RUNS = 3
const TARGET_ASSET_KB = 300
const TARGET_FCP_MS = 600
const TARGET_ROWS_MS = 1000
const ROWS = 50

interface LoadFigures {
  bytes: Record<string, number>
  requests: number
  fcpMs: number
  rowsMs: number | null
}

const kB = (n: number) => (n / 1000).toFixed(1)

/** Signs in over HTTP and answers the session cookie, so each cold run starts already signed in. */
async function sessionCookie(baseUrl: string) {
  const [name, value] = (await signIn(baseUrl, 'engineer@fernhollow.example')).split('=')
  return { name, value }
}

/** One cold load of `url` in a new context; waits for 50 register rows when `rows` is set. */
async function coldLoad(
  browser: Browser,
  baseUrl: string,
  url: string,
  cookie: { name: string; value: string } | null,
  rows: boolean,
): Promise<LoadFigures> {
  const context = await browser.newContext({ viewport: { width: 1366, height: 900 } })
  if (cookie) await context.addCookies([{ ...cookie, url: baseUrl }])
  const page = await context.newPage()
  const sizes: Promise<{ type: string; size: number }>[] = []
  page.on('requestfinished', (req) => {
    sizes.push(
      (async () => {
        const s = await req.sizes()
        const response = await req.response()
        const type = (response?.headers()['content-type'] ?? 'other').split(';')[0]
        const kind = type.includes('javascript')
          ? 'js'
          : type.includes('css')
            ? 'css'
            : type.includes('json')
              ? 'json'
              : type.includes('html')
                ? 'html'
                : type.includes('font')
                  ? 'font'
                  : 'other'
        return { type: kind, size: s.responseBodySize + s.responseHeadersSize }
      })(),
    )
  })
  await page.goto(`${baseUrl}${url}`)
  let rowsMs: number | null = null
  if (rows) {
    await page.waitForFunction((n) => document.querySelectorAll('.register-row').length >= n, ROWS, {
      polling: 'raf',
      timeout: 30_000,
    })
    rowsMs = await page.evaluate(() => performance.now())
  }
  await page.waitForLoadState('networkidle')
  const fcpMs = await page.evaluate(async () => {
    for (let i = 0; i < 100; i++) {
      const e = performance.getEntriesByName('first-contentful-paint')[0]
      if (e) return e.startTime
      await new Promise((r) => setTimeout(r, 20))
    }
    return NaN
  })
  // no request counted after this point: a size asked for while the context closes would fail the whole run
  page.removeAllListeners('requestfinished')
  const done = await Promise.all(sizes)
  const bytes: Record<string, number> = {}
  for (const d of done) bytes[d.type] = (bytes[d.type] ?? 0) + d.size
  await context.close()
  return { bytes, requests: done.length, fcpMs, rowsMs }
}

async function main() {
  // the figures, not a line per request (LOG_LEVEL=info writes them)
  logger.level = process.env.LOG_LEVEL ?? 'warn'
  if (!existsSync('dist/index.html')) throw new Error('Build the client first (npm run build)')
  console.log(`First-load benchmark: ${RUNS} cold runs per page (${os.cpus().length} CPUs, Node ${process.version})`)
  const cluster = await startCluster()
  let server: Awaited<ReturnType<typeof startServer>> | null = null
  let browser: Browser | null = null
  try {
    await seedDemoPlant(cluster.ownerUrl, { register: true })
    const config = loadConfig({ NODE_ENV: 'development', PORT: '0', DATABASE_URL: cluster.appUrl, SMTP_PORT: '1' })
    server = await startServer(config, { runJobs: false })
    const cookie = await sessionCookie(server.url)
    browser = await launchChromium()
    // one warm-up load so the server's code paths and PostgreSQL's caches are hot; the browser's cache stays cold
    await coldLoad(browser, server.url, '/register', cookie, true)

    let pass = true
    for (const [label, url, signedIn] of [
      ['sign-in page', '/sign-in', false],
      ['register (signed in)', '/register', true],
    ] as const) {
      console.log(`\n${label}: ${url}`)
      console.log('  run    JS kB   CSS kB  JSON kB  HTML kB  font kB other kB  requests   FCP ms  50 rows ms')
      const runs: LoadFigures[] = []
      for (let i = 1; i <= RUNS; i++) {
        const f = await coldLoad(browser, server.url, url, signedIn ? cookie : null, signedIn)
        runs.push(f)
        const b = (k: string) => kB(f.bytes[k] ?? 0).padStart(8)
        console.log(
          `  ${String(i).padEnd(4)}${b('js')} ${b('css')} ${b('json')} ${b('html')} ${b('font')} ${b('other')}` +
            `${String(f.requests).padStart(10)}${f.fcpMs.toFixed(0).padStart(9)}${(f.rowsMs === null ? '–' : f.rowsMs.toFixed(0)).padStart(12)}`,
        )
      }
      const worst = (pick: (f: LoadFigures) => number) => Math.max(...runs.map(pick))
      const assets = worst((f) => (f.bytes.js ?? 0) + (f.bytes.css ?? 0))
      const fcp = worst((f) => f.fcpMs)
      const lines: [boolean, string][] = [
        [fcp <= TARGET_FCP_MS, `FCP ${fcp.toFixed(0)} ms, worst of ${RUNS} (target ≤ ${TARGET_FCP_MS} ms)`],
      ]
      if (signedIn) {
        lines.unshift([
          assets <= TARGET_ASSET_KB * 1000,
          `JS + CSS ${kB(assets)} kB as sent (target ≤ ${TARGET_ASSET_KB} kB)`,
        ])
        const rowsMs = worst((f) => f.rowsMs ?? Infinity)
        lines.push([
          rowsMs <= TARGET_ROWS_MS,
          `50 rows visible after ${rowsMs.toFixed(0)} ms, worst of ${RUNS} (target ≤ ${TARGET_ROWS_MS} ms)`,
        ])
      }
      for (const [ok, text] of lines) {
        pass &&= ok
        console.log(`  ${ok ? 'PASS' : 'FAIL'}  ${text}`)
      }
    }
    console.log(
      `\n  load average ${os
        .loadavg()
        .map((l) => l.toFixed(1))
        .join(' ')} on ${os.cpus().length} CPUs`,
    )
    console.log(pass ? '  all targets met' : '  some targets missed')
  } finally {
    await browser?.close()
    await server?.close()
    await cluster.stop()
  }
}

runAsScript(import.meta.url, main)

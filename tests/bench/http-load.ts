// The load generator of the HTTP benchmarks, run in a child process of its own: the server under test keeps its
// event loop to itself, as it does behind real clients, instead of sharing it with 16 fetch loops (decoding,
// decompressing and reading every answer). `BENCH_CLIENT=inline` drives from the benchmark's own process instead, as
// the benchmarks did before, to compare.
import { fork } from 'node:child_process'
import { performance } from 'node:perf_hooks'
import { fileURLToPath } from 'node:url'

export interface Sample {
  variant: string
  ms: number
}
export interface LoadResult {
  samples: Sample[]
  completed: number
  errors: number
  elapsedMs: number
  firstError?: string
  /** Every request answered (warm-up included), and the load generator's CPU time meanwhile. */
  answered: number
  clientCpuMs: number
}

/** What to drive: the requests in turn (wrapping around), how many loops at once, for how long after a warm-up. */
export interface LoadPlan {
  requests: { variant: string; url: string }[]
  headers: Record<string, string>
  clients: number
  warmupMs: number
  durationMs: number
}

/**
 * `clients` loops, each sending one request after the other. After the warm-up, every request started is timed (also
 * when it ends after the window) and every request that ends inside the window counts towards requests/s.
 */
async function driveHere(plan: LoadPlan): Promise<LoadResult> {
  const samples: Sample[] = []
  let completed = 0
  let errors = 0
  let firstError: string | undefined
  let counter = 0
  let answered = 0
  const cpu0 = process.cpuUsage()
  const warmEnd = performance.now() + plan.warmupMs
  const end = warmEnd + plan.durationMs
  const worker = async () => {
    while (performance.now() < end) {
      const { variant, url } = plan.requests[counter++ % plan.requests.length]
      const t0 = performance.now()
      try {
        const res = await fetch(url, { headers: plan.headers })
        const body = await res.text()
        answered++
        if (res.status !== 200) throw new Error(`${res.status} ${body.slice(0, 200)}`)
      } catch (err) {
        errors++
        firstError ??= err instanceof Error ? err.message : String(err)
        continue
      }
      const t1 = performance.now()
      if (t0 >= warmEnd) samples.push({ variant, ms: t1 - t0 })
      if (t1 >= warmEnd && t1 <= end) completed++
    }
  }
  await Promise.all(Array.from({ length: plan.clients }, worker))
  const cpu = process.cpuUsage(cpu0)
  const clientCpuMs = (cpu.user + cpu.system) / 1000
  return { samples, completed, errors, elapsedMs: plan.durationMs, firstError, answered, clientCpuMs }
}

/** Drives `plan` from a child process (the default) or, with BENCH_CLIENT=inline, from this process. */
export async function drive(plan: LoadPlan): Promise<LoadResult> {
  if (process.env.BENCH_CLIENT === 'inline') return driveHere(plan)
  const child = fork(fileURLToPath(import.meta.url), ['--drive'], { execArgv: ['--import', 'tsx'] })
  return new Promise<LoadResult>((resolve, reject) => {
    child.once('message', (m) => {
      resolve(m as LoadResult)
      child.kill()
    })
    child.once('error', reject)
    child.once('exit', (code) => reject(new Error(`the load generator stopped (exit ${code})`)))
    child.send(plan)
  })
}

// the child: one plan in, its result out
if (process.argv.includes('--drive') && process.send) {
  process.once('message', (plan) => {
    void driveHere(plan as LoadPlan).then((r) => process.send!(r, () => process.disconnect()))
  })
}

import { Worker } from 'node:worker_threads'
import { fileURLToPath } from 'node:url'
import { checkCopyPage, type PageCheck } from './audit.chain.ts'
import { linkHasher } from './audit.hash.ts'

/**
 * Checks a page of the chain (its binary copy, audit.chain.ts `checkCopyPage`) against the checkpoint heads in it.
 * The page's memory is handed over: a page larger than Node's buffer pool is moved to a worker thread with the whole
 * memory it lies in, which the caller must hold for nothing else.
 */
export type PageChecker = (page: Buffer, heads: number[]) => Promise<PageCheck>

/** The page check in the calling thread. */
export function checkPageHere(linkKey: Buffer): PageChecker {
  const link = linkHasher(linkKey)
  return async (page, heads) => checkCopyPage(page, heads, link)
}

/** What a page answers when its thread failed: not intact, so the walk is made again in one piece in the caller. */
const UNCHECKED: PageCheck = { ok: false, first: null, end: null, marks: [] }

let bundle: Promise<string | null> | null = null

/**
 * The worker's code (server/features/audit/audit.verify.worker.ts and what it imports, plain functions and node:
 * built-ins) bundled once per process by esbuild into one CommonJS script, so that a thread starts in milliseconds
 * instead of loading tsx (a second or so of CPU per thread). Null when it cannot be bundled: the threads then load
 * the TypeScript sources through tsx, as the app itself runs.
 */
export function workerBundle(): Promise<string | null> {
  bundle ??= import('esbuild')
    .then(({ build }) =>
      build({
        entryPoints: [fileURLToPath(new URL('./audit.verify.worker.ts', import.meta.url))],
        bundle: true,
        platform: 'node',
        format: 'cjs',
        target: `node${process.versions.node.split('.')[0]}`,
        write: false,
        logLevel: 'silent',
      }),
    )
    .then((r) => r.outputFiles[0].text)
    .catch(() => null)
  return bundle
}

/**
 * `n` worker threads (server/features/audit/audit.verify.worker.ts) checking pages side by side, each page sent to the
 * thread with the fewest pages waiting, its bytes moved to the thread, not copied. A page whose thread fails (it could
 * not start, or died) answers "not intact", so the caller walks the chain again in one piece itself: the walk's answer
 * never depends on threads being available.
 */
export async function startPageWorkers(
  n: number,
  linkKey: Buffer,
): Promise<{ check: PageChecker; close: () => Promise<void> }> {
  const code = await workerBundle()
  type Job = (r: PageCheck) => void
  const workers = Array.from({ length: n }, () => {
    const workerData = { linkKey: new Uint8Array(linkKey) }
    const w = code
      ? new Worker(code, { eval: true, workerData })
      : new Worker(new URL('./audit.verify.worker.ts', import.meta.url), { workerData, execArgv: ['--import', 'tsx'] })
    const slot = { w, jobs: new Map<number, Job>(), dead: false }
    w.on('message', (m: { id: number; result: PageCheck }) => {
      const job = slot.jobs.get(m.id)
      slot.jobs.delete(m.id)
      job?.(m.result)
    })
    const fail = () => {
      slot.dead = true
      for (const job of slot.jobs.values()) job(UNCHECKED)
      slot.jobs.clear()
    }
    w.on('error', fail)
    w.on('exit', fail)
    return slot
  })
  let next = 0
  return {
    check(page, heads) {
      const live = workers.filter((s) => !s.dead)
      if (!live.length) return Promise.resolve(UNCHECKED)
      const slot = live.reduce((a, b) => (b.jobs.size < a.jobs.size ? b : a))
      const id = next++
      // the page's memory is moved to the thread whole, unless it may hold other data (a small buffer, from Node's
      // shared pool): that page is copied into its own first
      const own = page.byteOffset === 0 && page.length > Buffer.poolSize ? page : new Uint8Array(page)
      return new Promise<PageCheck>((resolve) => {
        slot.jobs.set(id, resolve)
        slot.w.postMessage({ id, page: own, heads }, [own.buffer as ArrayBuffer])
      })
    },
    async close() {
      await Promise.all(workers.map((s) => s.w.terminate()))
    },
  }
}

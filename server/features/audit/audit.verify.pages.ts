import { Worker } from 'node:worker_threads'
import { checkPage, type PageCheck, rowOf } from './audit.chain.ts'
import { linkHasher } from './audit.hash.ts'

/** Checks one page of the chain (its JSON text) against the checkpoint heads within its range. */
export type PageChecker = (text: string, heads: number[]) => Promise<PageCheck>

/** The page check in the calling thread. */
export function checkPageHere(linkKey: Buffer): PageChecker {
  const link = linkHasher(linkKey)
  return async (text, heads) => checkPage((JSON.parse(text) as unknown[][]).map(rowOf), heads, link)
}

/**
 * `n` worker threads (server/features/audit/audit.verify.worker.ts) checking pages side by side, each page sent to the
 * thread with the fewest pages waiting. A thread that fails (it could not start) hands its pages back to the calling
 * thread, so the walk's answer never depends on threads being available.
 */
export function startPageWorkers(n: number, linkKey: Buffer): { check: PageChecker; close: () => Promise<void> } {
  const here = checkPageHere(linkKey)
  type Job = { text: string; heads: number[]; resolve: (r: PageCheck) => void; reject: (e: unknown) => void }
  const workers = Array.from({ length: n }, () => {
    const w = new Worker(new URL('./audit.verify.worker.ts', import.meta.url), {
      workerData: { linkKey: new Uint8Array(linkKey) },
      // the worker runs the TypeScript sources as the app does (npm start, the tests: node --import tsx)
      execArgv: ['--import', 'tsx'],
    })
    const slot = { w, jobs: new Map<number, Job>(), dead: false }
    w.on('message', (m: { id: number; result: PageCheck }) => {
      const job = slot.jobs.get(m.id)
      slot.jobs.delete(m.id)
      job?.resolve(m.result)
    })
    const fail = () => {
      slot.dead = true
      for (const job of slot.jobs.values()) here(job.text, job.heads).then(job.resolve, job.reject)
      slot.jobs.clear()
    }
    w.on('error', fail)
    w.on('exit', fail)
    return slot
  })
  let next = 0
  return {
    check(text, heads) {
      const live = workers.filter((s) => !s.dead)
      if (!live.length) return here(text, heads)
      const slot = live.reduce((a, b) => (b.jobs.size < a.jobs.size ? b : a))
      const id = next++
      return new Promise<PageCheck>((resolve, reject) => {
        slot.jobs.set(id, { text, heads, resolve, reject })
        slot.w.postMessage({ id, text, heads })
      })
    },
    async close() {
      await Promise.all(workers.map((s) => s.w.terminate()))
    },
  }
}

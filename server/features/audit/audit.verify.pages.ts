import { Worker } from 'node:worker_threads'
import { createRequire } from 'node:module'
import { fileURLToPath } from 'node:url'
import { type PageCheck, type PageMessage, type PageWork, stopTaking } from './audit.chain.ts'

/** What a page answers that no thread checked: not intact, so the walk is made again in one piece in the caller. */
const UNCHECKED: PageCheck = { ok: false, first: null, end: null, marks: [] }

const require = createRequire(import.meta.url)
let bundle: Promise<string | null> | null = null

/**
 * The worker's code (server/features/audit/audit.verify.worker.ts and what it imports: plain functions and node:
 * built-ins; pg is loaded from node_modules) bundled once per process by esbuild into one CommonJS script, so that a
 * thread starts in milliseconds instead of loading tsx (a second or so of CPU per thread). Null when it cannot be
 * bundled: the threads then load the TypeScript sources through tsx, as the app itself runs.
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
        // pg stays out of the script (bundling it costs more than the rest): the thread loads it as the app does, from
        // the path it resolves to here, whatever the thread's working directory
        plugins: [
          {
            name: 'pg-from-here',
            setup: (b) => b.onResolve({ filter: /^pg$/ }, () => ({ path: require.resolve('pg'), external: true })),
          },
        ],
        logLevel: 'silent',
      }),
    )
    .then((r) => r.outputFiles[0].text)
    .catch(() => null)
  return bundle
}

/**
 * The pages of a walk checked by `n` worker threads (server/features/audit/audit.verify.worker.ts), each reading the
 * pages it takes over a connection of its own in the walk's snapshot, so neither the pages' bytes nor their checks
 * touch this thread. Answers each page's check in page order; a page no thread answered for (a thread could not start,
 * could not connect, died, or stopped after a page was found broken) answers "not intact", so the caller walks the
 * chain again in one piece itself: the walk's answer never depends on threads being available.
 */
export async function checkPagesInThreads(n: number, work: Omit<PageWork, 'control'>): Promise<PageCheck[]> {
  const code = await workerBundle()
  const shared: PageWork = { ...work, control: new Int32Array(new SharedArrayBuffer(8)) }
  const results: PageCheck[] = work.pages.map(() => UNCHECKED)
  await Promise.all(
    Array.from({ length: n }, async () => {
      const w = code
        ? new Worker(code, { eval: true, workerData: shared })
        : new Worker(new URL('./audit.verify.worker.ts', import.meta.url), {
            workerData: shared,
            execArgv: ['--import', 'tsx'],
          })
      w.on('message', (m: PageMessage) => {
        results[m.page] = m.result
      })
      // a thread ends by itself once no page is left for it; one that fails ends too, its pages left unchecked
      w.on('error', () => stopTaking(shared))
      await new Promise((resolve) => w.once('exit', resolve))
    }),
  )
  return results
}

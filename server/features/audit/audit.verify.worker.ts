import { parentPort, workerData } from 'node:worker_threads'
import { checkPage, rowOf } from './audit.chain.ts'
import { linkHasher } from './audit.hash.ts'

// A worker thread of the chain walk (server/features/audit/audit.verify.pages.ts): checks the pages of the chain it
// is sent, each one JSON text as PostgreSQL wrote it, with the link key it was started with.
const key = Buffer.from(workerData.linkKey as Uint8Array)
const link = linkHasher(key)

parentPort!.on('message', (m: { id: number; text: string; heads: number[] }) => {
  const rows = (JSON.parse(m.text) as unknown[][]).map(rowOf)
  parentPort!.postMessage({ id: m.id, result: checkPage(rows, m.heads, link) })
})

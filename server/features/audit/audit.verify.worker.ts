import { parentPort, workerData } from 'node:worker_threads'
import { checkCopyPage } from './audit.chain.ts'
import { linkHasher } from './audit.hash.ts'

// A worker thread of the chain walk (server/features/audit/audit.verify.pages.ts): checks the pages of the chain it
// is sent, each PostgreSQL's binary copy of the page's events, with the link key it was started with. It is bundled
// into one script with what it imports, so it imports nothing but node: built-ins and plain functions.
const key = Buffer.from(workerData.linkKey as Uint8Array)
const link = linkHasher(key)

parentPort!.on('message', (m: { id: number; page: Uint8Array; heads: number[] }) => {
  const page = Buffer.from(m.page.buffer, m.page.byteOffset, m.page.byteLength)
  parentPort!.postMessage({ id: m.id, result: checkCopyPage(page, m.heads, link) })
})

import { parentPort, workerData } from 'node:worker_threads'
import pg from 'pg'
import { copyOut } from '../../db/copy-out.ts'
import {
  chainPageCopy,
  checkCopyPage,
  type PageMessage,
  pageRoom,
  type PageWork,
  stopTaking,
  takePage,
} from './audit.chain.ts'
import { linkHasher } from './audit.hash.ts'

// A worker thread of the chain walk (server/features/audit/audit.verify.pages.ts): on a connection of its own, in the
// walk's snapshot, it takes the next page of the chain not yet taken, reads its binary copy and checks it with the link
// key, and sends what it found, until no page is left or a page was found broken. The pages' bytes never reach the
// main thread. It is bundled into one script with what it imports (plain functions and node: built-ins); pg is
// loaded from node_modules (audit.verify.pages.ts, workerBundle).
const work = workerData as PageWork
const link = linkHasher(Buffer.from(work.linkKey))
const send = (m: PageMessage) => parentPort!.postMessage(m)

async function checkPages(): Promise<void> {
  const client = new pg.Client({
    connectionString: work.connectionString,
    connectionTimeoutMillis: work.connectTimeoutMs,
  })
  await client.connect()
  try {
    await client.query('BEGIN ISOLATION LEVEL REPEATABLE READ READ ONLY')
    // a snapshot id is hex digits and dashes (checked by the caller); SET TRANSACTION SNAPSHOT takes a literal only
    await client.query(`SET TRANSACTION SNAPSHOT '${work.snapshot}'`)
    // two buffers in turn: one page read into the one while the page before is checked in the other
    const spare: Buffer[] = []
    const read = (page: number) =>
      page < 0
        ? null
        : copyOut(client, chainPageCopy(work.pages[page]), spare.pop() ?? pageRoom(work.pages[page])).then((bytes) => ({
            page,
            bytes,
          }))
    let next = read(takePage(work))
    while (next) {
      const { page, bytes } = await next
      // PostgreSQL sends the next page while this one is checked
      next = read(takePage(work))
      const result = checkCopyPage(bytes, work.pages[page].heads, link)
      if (!result.ok) stopTaking(work)
      send({ page, result })
      if (bytes.byteOffset === 0) spare.push(Buffer.from(bytes.buffer))
    }
    await client.query('COMMIT')
  } finally {
    await client.end()
  }
}

// a failure (no connection, the connection lost) is thrown out of the thread, which ends with an 'error' event: the
// caller stops the other threads and walks the chain in one piece itself
checkPages().catch((err: unknown) =>
  setImmediate(() => {
    throw err
  }),
)

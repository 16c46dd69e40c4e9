import { createHash } from 'node:crypto'
import { createReadStream } from 'node:fs'
import type pg from 'pg'
import { badFile } from '../register/imports.service.ts'
import { copyInto } from './alarms.repository.ts'
import { type FileKind, readRows } from './file-rows.ts'

// What the two bulk loads of the alarms feature (alarm journals, process data) share: the upload's stored name, the
// header row, the file's checksum, a buffered COPY and the job's progress reports. docs/alarms.md.

const COPY_CHUNK = 256 * 1024

/** The name an upload is stored under: the file's own name without folders, at most 200 characters. */
export const uploadFileName = (fileName: string) => fileName.replace(/^.*[\\/]/, '').slice(0, 200) || 'upload'

/** Reads the header row only (the rest is the job's). */
export async function headerOf(path: string, kind: FileKind, delimiter: string): Promise<string[]> {
  for await (const row of readRows(path, kind, delimiter)) return row
  throw badFile('The file is empty')
}

/** The SHA-256 of a file on disk, in hex. */
export function hashFile(path: string): Promise<string> {
  return new Promise((resolve, reject) => {
    const h = createHash('sha256')
    createReadStream(path)
      .on('data', (d) => h.update(d))
      .on('end', () => resolve(h.digest('hex')))
      .on('error', reject)
  })
}

/**
 * A buffered `COPY … FROM STDIN` on the connection: `fill` writes the lines (COPY text format); the COPY ends when
 * `fill` returns. When `fill` or the COPY fails, the COPY is failed too (a COPY left open would hold the connection),
 * so the connection's transaction rolls back.
 */
export async function copyLines(
  client: pg.PoolClient,
  statement: string,
  fill: (write: (lines: string) => Promise<void>) => Promise<void>,
): Promise<void> {
  const copy = copyInto(client, statement)
  const done = new Promise<void>((resolve, reject) => {
    copy.on('finish', resolve)
    copy.on('error', reject)
  })
  let chunk = ''
  try {
    await fill(async (lines) => {
      chunk += lines
      if (chunk.length > COPY_CHUNK) {
        if (!copy.write(chunk)) await new Promise((r) => copy.once('drain', r))
        chunk = ''
      }
    })
    if (chunk) copy.write(chunk)
    copy.end()
    await done
  } catch (err) {
    copy.destroy(err instanceof Error ? err : new Error(String(err)))
    await done.catch(() => undefined)
    throw err
  }
}

/** A progress reporter for a job reading rows: calls `report` at most once a second, every 16,384 rows at most. */
export function progressReporter(report: (rowsRead: number) => Promise<unknown>) {
  let last = Date.now()
  return async (rowsRead: number) => {
    if ((rowsRead & 0x3fff) === 0 && Date.now() - last > 1000) {
      last = Date.now()
      await report(rowsRead)
    }
  }
}

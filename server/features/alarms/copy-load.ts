import { createHash } from 'node:crypto'
import { createReadStream } from 'node:fs'
import { rm } from 'node:fs/promises'
import type { Selectable } from 'kysely'
import type pg from 'pg'
import type { ListResult } from '../../../shared/schemas/common.ts'
import { scopeSites } from '../../authorize.ts'
import type { AlarmJournalUploadTable, AlarmUploadStatus, ProcessDataUploadTable } from '../../db/schema.ts'
import type { AppDeps } from '../../deps.ts'
import type { CurrentUser } from '../../types/express.d.ts'
import { badFile } from '../register/imports.service.ts'
import { copyInto } from './alarms.repository.ts'
import { type FileKind, readRows, sniffFile } from './file-rows.ts'

// What the two bulk loads of the alarms feature (alarm journals, process data) share: the upload's stored name, the
// header row, the file's checksum, a buffered COPY, the job's frame and progress reports, listing the uploads.
// docs/alarms.md.

/** An upload row as both kinds store it. */
interface UploadRow {
  site_id: number
  status: AlarmUploadStatus
  file_path: string | null
}

const isoOrNull = (d: Date | null) => (d ? d.toISOString() : null)

/** What both kinds of upload answer with in the API; each adds its own counts and details. */
export function uploadFields(r: Selectable<AlarmJournalUploadTable> | Selectable<ProcessDataUploadTable>) {
  return {
    id: r.id,
    siteId: r.site_id,
    fileName: r.file_name,
    timeZone: r.time_zone,
    status: r.status,
    rowsRead: Number(r.rows_read),
    rowsRejected: Number(r.rows_rejected),
    rejections: r.rejections,
    error: r.error,
    firstAt: isoOrNull(r.first_at),
    lastAt: isoOrNull(r.last_at),
    createdAt: r.created_at.toISOString(),
  }
}

/** A page of the uploads at the user's sites (or at the one site asked for), newest first. */
export async function uploadsPage<R, D>(
  list: (siteIds: number[], page: { page: number; pageSize: number }) => Promise<{ rows: R[]; total: number }>,
  user: CurrentUser | null,
  q: { siteId?: number; page: number; pageSize: number },
  toDto: (row: R) => D,
): Promise<ListResult<D>> {
  const siteIds = scopeSites(user, q.siteId ? [q.siteId] : undefined)
  if (!siteIds.length) return { items: [], total: 0 }
  const { rows, total } = await list(siteIds, q)
  return { items: rows.map(toDto), total }
}

/** A failure the job raised on purpose (an AppError with its status): the upload shows its message as it is. */
export const isRefusal = (err: unknown): err is Error => err instanceof Error && 'status' in err

/** What a load job reads its file with: its connection, the file's kind and its checksum (being computed). */
export interface LoadContext<R> {
  upload: R
  path: string
  client: pg.PoolClient
  kind: FileKind
  delimiter: string
  hashing: Promise<string>
}

const loading = new Set<string>()

/**
 * The frame of both load jobs. Runs `load` once at a time per upload in this process, and only while the upload is
 * queued with its file on disk, on a connection of its own (COPY and Kysely share its transaction): `markRunning`
 * first, then `load`; on any failure `fail` records it. The connection is released and the file removed whatever
 * happens.
 */
export async function runQueuedLoad<R extends UploadRow>(
  deps: AppDeps,
  key: string,
  job: {
    find: () => Promise<R | undefined>
    markRunning: () => Promise<void>
    load: (c: LoadContext<R>) => Promise<void>
    fail: (err: unknown) => Promise<void>
  },
): Promise<void> {
  if (loading.has(key)) return
  loading.add(key)
  const upload = await job.find().catch(() => undefined)
  if (!upload || upload.status !== 'queued' || !upload.file_path) {
    loading.delete(key)
    return
  }
  const path = upload.file_path
  let client: pg.PoolClient
  try {
    client = await deps.pool.connect()
  } catch (err) {
    loading.delete(key) // the upload stays queued for the next run, as it would had the lookup failed
    throw err
  }
  try {
    await job.markRunning()
    const hashing = hashFile(path)
    // the load awaits it; if the load fails first, the file is removed under it and that rejection is not news
    hashing.catch(() => undefined)
    const { kind, delimiter } = await sniffFile(path)
    await job.load({ upload, path, client, kind, delimiter, hashing })
  } catch (err) {
    await job.fail(err).catch(() => undefined)
  } finally {
    client.release()
    loading.delete(key)
    await rm(path, { force: true })
  }
}

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

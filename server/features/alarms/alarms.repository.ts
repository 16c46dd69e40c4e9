import { sql, type Transaction } from 'kysely'
import type pg from 'pg'
import { EVENT_CODE } from '../../../shared/domain/alarm-figures.ts'
import { from as copyFrom } from 'pg-copy-streams'
import type { Db } from '../../db/index.ts'
import { ALARM_SETTING_COLUMNS } from '../register/limits.repository.ts'
import { pageWithTotal } from '../../db/paging.ts'
import type { AlarmUploadStatus, Database } from '../../db/schema.ts'

// Every query of the alarms feature: journal uploads and events, figures, alarm states, process-data uploads and
// samples. Bulk loads go through COPY on one pooled connection that also carries a Kysely transaction.

type Q = Db | Transaction<Database>

// shared with the audit chain walk; the alarm services reach it through this module
export { kyselyOn } from '../../db/index.ts'

/** Opens a COPY … FROM STDIN stream on the connection. */
export function copyInto(client: pg.PoolClient, statement: string) {
  return client.query(copyFrom(statement))
}

// ---- mappings ----

export async function rememberedJournalMapping(db: Q, userId: number): Promise<Record<string, string>> {
  const row = await db
    .selectFrom('import_mapping')
    .select('alarm_mapping')
    .where('user_id', '=', userId)
    .executeTakeFirst()
  return row?.alarm_mapping ?? {}
}

export async function rememberJournalMapping(db: Q, userId: number, mapping: Record<string, string>, now: Date) {
  await db
    .insertInto('import_mapping')
    .values({ user_id: userId, mapping: '{}', alarm_mapping: JSON.stringify(mapping), updated_at: now })
    .onConflict((oc) => oc.column('user_id').doUpdateSet({ alarm_mapping: JSON.stringify(mapping), updated_at: now }))
    .execute()
}

/** What every upload is stored with: who sent which file for which site, its time zone and where it waits. */
interface NewUpload {
  siteId: number
  userId: number
  fileName: string
  timeZone: string
  filePath: string
  now: Date
}
const uploadColumns = (v: NewUpload) => ({
  site_id: v.siteId,
  created_by: v.userId,
  file_name: v.fileName,
  time_zone: v.timeZone,
  file_path: v.filePath,
  created_at: v.now,
})

/** How far a load has come, as both kinds of upload store it. */
const progressColumns = (p: { status?: AlarmUploadStatus; rowsRead?: number; rowsRejected?: number }) => ({
  ...(p.status ? { status: p.status } : {}),
  ...(p.rowsRead !== undefined ? { rows_read: p.rowsRead } : {}),
  ...(p.rowsRejected !== undefined ? { rows_rejected: p.rowsRejected } : {}),
})

/** How a load ended, as both kinds of upload store it; the waiting file is gone. */
interface FinishedUpload {
  status: AlarmUploadStatus
  rowsRead: number
  rowsRejected: number
  rejections: { row: number; message: string }[]
  error: string | null
  firstAt: Date | null
  lastAt: Date | null
  checksum: string | null
  now: Date
}
const finishedColumns = (r: FinishedUpload) => ({
  status: r.status,
  rows_read: r.rowsRead,
  rows_rejected: r.rowsRejected,
  rejections: JSON.stringify(r.rejections),
  error: r.error,
  first_at: r.firstAt,
  last_at: r.lastAt,
  checksum: r.checksum,
  file_path: null,
  finished_at: r.now,
})

type Page = { page: number; pageSize: number }

// ---- journal uploads ----

export async function insertJournalUpload(
  db: Q,
  v: NewUpload & { fileKind: 'csv' | 'xlsx'; mapping: Record<string, string> },
) {
  const row = await db
    .insertInto('alarm_journal_upload')
    .values({ ...uploadColumns(v), file_kind: v.fileKind, mapping: JSON.stringify(v.mapping) })
    .returning('id')
    .executeTakeFirstOrThrow()
  return row.id
}

export const journalUploadById = (db: Q, id: number) =>
  db.selectFrom('alarm_journal_upload').selectAll().where('id', '=', id).executeTakeFirst()

/** A page of the journal uploads at the sites (at least one), newest first. */
export const listJournalUploads = (db: Q, siteIds: number[], page: Page) =>
  pageWithTotal(db.selectFrom('alarm_journal_upload').where('site_id', 'in', siteIds), page, (q) =>
    q.selectAll().orderBy('id', 'desc'),
  )

export async function setJournalProgress(
  db: Q,
  id: number,
  p: { status?: AlarmUploadStatus; rowsRead?: number; rowsRejected?: number; checksum?: string },
) {
  await db
    .updateTable('alarm_journal_upload')
    .set({ ...progressColumns(p), ...(p.checksum ? { checksum: p.checksum } : {}) })
    .where('id', '=', id)
    .execute()
}

export async function finishJournalUpload(
  db: Q,
  id: number,
  r: FinishedUpload & {
    rowsStored: number
    rowsDuplicate: number
    unmatchedTags: string[]
    unmatchedTagCount: number
    duplicateOf: number | null
  },
) {
  await db
    .updateTable('alarm_journal_upload')
    .set({
      ...finishedColumns(r),
      rows_stored: r.rowsStored,
      rows_duplicate: r.rowsDuplicate,
      unmatched_tags: JSON.stringify(r.unmatchedTags),
      unmatched_tag_count: r.unmatchedTagCount,
      duplicate_of: r.duplicateOf,
    })
    .where('id', '=', id)
    .execute()
}

export async function earlierUploadWithChecksum(db: Q, siteId: number, checksum: string, id: number) {
  const row = await db
    .selectFrom('alarm_journal_upload')
    .select('id')
    .where('site_id', '=', siteId)
    .where('checksum', '=', checksum)
    .where('id', '<', id)
    .where('status', '=', 'done')
    .orderBy('id')
    .executeTakeFirst()
  return row?.id ?? null
}

// ---- journal staging and loading (inside one transaction on one connection) ----

export async function createJournalStage(trx: Transaction<Database>) {
  await sql`CREATE TEMP TABLE alarm_stage (
    t_ms bigint NOT NULL, tag text NOT NULL, kind smallint NOT NULL, priority smallint NOT NULL,
    position text NOT NULL, message text NOT NULL
  ) ON COMMIT DROP`.execute(trx)
}

export async function stageRange(trx: Transaction<Database>) {
  const r = await sql<{ n: string; lo: string | null; hi: string | null }>`
    SELECT count(*) AS n, min(t_ms) AS lo, max(t_ms) AS hi FROM alarm_stage`.execute(trx)
  const row = r.rows[0]
  return {
    count: Number(row.n),
    lo: row.lo === null ? null : Number(row.lo),
    hi: row.hi === null ? null : Number(row.hi),
  }
}

export async function ensureJournalPartitions(q: Q, from: Date, to: Date) {
  await sql`SELECT alarm_event_ensure_partitions(${from}, ${to})`.execute(q)
}

/** Moves the staged rows into the journal; rows already there (same site, time and content) are skipped. */
export async function loadStagedJournal(trx: Transaction<Database>, siteId: number, uploadId: number): Promise<number> {
  const r = await sql`
    INSERT INTO alarm_event
      (site_id, occurred_at, tag, kind, priority, position, message, limit_id, upload_id, row_hash)
    SELECT ${siteId}, to_timestamp(s.t_ms / 1000.0), s.tag, s.kind, s.priority, s.position, s.message,
      l.id, ${uploadId},
      md5(lower(s.tag) || '|' || s.kind || '|' || s.priority || '|' || s.position || '|' || s.message)::uuid
    FROM alarm_stage s
    LEFT JOIN (
      SELECT DISTINCT ON (lower(tag)) lower(tag) AS k, id FROM limit_function WHERE site_id = ${siteId}
      ORDER BY lower(tag), id
    ) l ON l.k = lower(s.tag)
    ON CONFLICT DO NOTHING`.execute(trx)
  return Number(r.numAffectedRows ?? 0)
}

/** Tags of the staged rows that the site's register does not know (at most `limit`), and how many there are. */
export async function unmatchedStagedTags(trx: Transaction<Database>, siteId: number, limit = 200) {
  const r = await sql<{ tag: string; n: string }>`
    WITH t AS (
      SELECT min(s.tag) AS tag FROM alarm_stage s GROUP BY lower(s.tag)
      HAVING NOT EXISTS (
        SELECT 1 FROM limit_function l WHERE l.site_id = ${siteId} AND lower(l.tag) = lower(min(s.tag))
      )
    )
    SELECT tag, count(*) OVER () AS n FROM t ORDER BY tag LIMIT ${limit}`.execute(trx)
  return { tags: r.rows.map((x) => x.tag), count: r.rows.length ? Number(r.rows[0].n) : 0 }
}

export async function countJournalEvents(db: Q, siteId: number) {
  const r = await db
    .selectFrom('alarm_event')
    .select((eb) => eb.fn.countAll<number>().as('n'))
    .where('site_id', '=', siteId)
    .executeTakeFirstOrThrow()
  return Number(r.n)
}

// ---- figures ----

/** Journal events of a site in [from, to) as columns, sorted by time; optionally one area or one position. */
/** How far before a period the figures look for alarms still active when it starts (docs/domain/alarm-figures.md). */
export const ACTIVE_AT_START_LOOKBACK_DAYS = 30

export async function journalColumns(
  pool: pg.Pool,
  siteId: number,
  from: Date,
  to: Date,
  scope: { areaId?: number; position?: string },
) {
  const params: unknown[] = [siteId, from, to]
  // alerts are not alarms and do not count in the alarm figures (docs/domain/alarm-figures.md)
  let where =
    'e.site_id = $1 AND e.occurred_at >= $2 AND e.occurred_at < $3 AND NOT EXISTS ' +
    "(SELECT 1 FROM limit_function a WHERE a.id = e.limit_id AND a.limit_class = 'alert')"
  if (scope.areaId) {
    params.push(scope.areaId)
    where += ` AND e.limit_id IN (SELECT id FROM limit_function WHERE area_id = $${params.length})`
  }
  if (scope.position !== undefined) {
    params.push(scope.position)
    where += ` AND e.position = $${params.length}`
  }
  const r = await pool.query({
    text: `SELECT (extract(epoch FROM e.occurred_at))::float8, e.tag, e.kind, e.priority, e.position
           FROM alarm_event e WHERE ${where} ORDER BY e.occurred_at`,
    values: params,
    rowMode: 'array',
  })
  const n = r.rows.length
  const t = new Float64Array(n)
  const tag = new Int32Array(n)
  const kind = new Int8Array(n)
  const priority = new Int8Array(n)
  const position = new Int32Array(n)
  const tags: string[] = []
  const tagIdx = new Map<string, number>()
  const positions: string[] = []
  const posIdx = new Map<string, number>()
  for (let i = 0; i < n; i++) {
    const row = r.rows[i] as [number, string, number, number, string]
    t[i] = row[0]
    const key = row[1].toLowerCase()
    let ti = tagIdx.get(key)
    if (ti === undefined) {
      ti = tags.push(row[1]) - 1
      tagIdx.set(key, ti)
    }
    tag[i] = ti
    kind[i] = row[2]
    priority[i] = row[3]
    let pi = posIdx.get(row[4])
    if (pi === undefined) {
      pi = positions.push(row[4]) - 1
      posIdx.set(row[4], pi)
    }
    position[i] = pi
  }
  // alarms active when the period starts: the last activation or return of each tag within the look-back before it
  const lookback = where.replace(
    'e.occurred_at >= $2 AND e.occurred_at < $3',
    `e.occurred_at >= $2::timestamptz - interval '${ACTIVE_AT_START_LOOKBACK_DAYS} days'` +
      ' AND e.occurred_at < least($2::timestamptz, $3::timestamptz)',
  )
  const before = await pool.query({
    text: `SELECT * FROM (
             SELECT DISTINCT ON (lower(e.tag)) e.tag, e.kind, (extract(epoch FROM e.occurred_at))::float8 AS t
             FROM alarm_event e
             WHERE ${lookback}
               AND e.kind IN (${EVENT_CODE.active}, ${EVENT_CODE.return})
             ORDER BY lower(e.tag), e.occurred_at DESC
           ) last WHERE kind = ${EVENT_CODE.active}`,
    values: params,
    rowMode: 'array',
  })
  const activeAtStart = (before.rows as [string, number, number][]).map(([name, , since]) => {
    const key = name.toLowerCase()
    let ti = tagIdx.get(key)
    if (ti === undefined) {
      ti = tags.push(name) - 1
      tagIdx.set(key, ti)
    }
    return { tag: ti, since }
  })
  return { t, tag, kind, priority, position, tags, positions, activeAtStart }
}

export async function limitIdsByTag(db: Q, siteId: number, tags: string[]) {
  if (!tags.length) return new Map<string, number>()
  const rows = await db
    .selectFrom('limit_function')
    .select(['id', 'tag'])
    .where('site_id', '=', siteId)
    .where(
      sql<string>`lower(tag)`,
      'in',
      tags.map((t) => t.toLowerCase()),
    )
    .orderBy('id')
    .execute()
  const map = new Map<string, number>()
  for (const r of rows) if (!map.has(r.tag.toLowerCase())) map.set(r.tag.toLowerCase(), r.id)
  return map
}

export async function unmatchedJournalTags(db: Q, siteId: number, from: Date, to: Date, limit = 100) {
  const r = await sql<{ tag: string }>`
    SELECT min(e.tag) AS tag FROM alarm_event e
    WHERE e.site_id = ${siteId} AND e.occurred_at >= ${from} AND e.occurred_at < ${to} AND e.limit_id IS NULL
    GROUP BY lower(e.tag) ORDER BY 1 LIMIT ${limit}`.execute(db)
  return r.rows.map((x) => x.tag)
}

/** Shelve events in the journal with no alarm-state record of kind shelved covering them. */
export async function shelvesWithoutRecord(db: Q, siteId: number, from: Date, to: Date, limit = 100) {
  const r = await sql<{ tag: string; at: Date }>`
    SELECT e.tag, e.occurred_at AS at FROM alarm_event e
    WHERE e.site_id = ${siteId} AND e.occurred_at >= ${from} AND e.occurred_at < ${to} AND e.kind = 3
      AND NOT EXISTS (
        SELECT 1 FROM alarm_state s WHERE s.site_id = e.site_id AND lower(s.tag) = lower(e.tag) AND s.kind = 'shelved'
          AND s.started_at <= e.occurred_at + interval '5 minutes' AND coalesce(s.ended_at, s.until) >= e.occurred_at)
    ORDER BY e.occurred_at LIMIT ${limit}`.execute(db)
  return r.rows
}

export async function positionCount(db: Q, siteId: number, from: Date, to: Date) {
  const r = await sql<{ n: string }>`
    SELECT count(DISTINCT position) AS n FROM alarm_event
    WHERE site_id = ${siteId} AND occurred_at >= ${from} AND occurred_at < ${to}`.execute(db)
  return Number(r.rows[0]?.n ?? 0)
}

// ---- alarm states ----

const stateColumns = [
  's.id',
  's.site_id',
  's.limit_id',
  's.tag',
  's.kind',
  's.status',
  's.reason',
  's.started_by',
  's.started_at',
  's.until',
  's.signature_id',
  's.change_request_id',
  's.ended_by',
  's.ended_at',
  's.end_note',
  'u1.display_name as started_by_name',
  'u2.display_name as ended_by_name',
] as const

function statesQuery(db: Q) {
  return db
    .selectFrom('alarm_state as s')
    .innerJoin('app_user as u1', 'u1.id', 's.started_by')
    .leftJoin('app_user as u2', 'u2.id', 's.ended_by')
}

export type AlarmStateRow = Awaited<ReturnType<typeof stateById>>

export const stateById = (db: Q, id: number) =>
  statesQuery(db).select(stateColumns).where('s.id', '=', id).executeTakeFirst()

export async function lockState(trx: Transaction<Database>, id: number) {
  await trx.selectFrom('alarm_state').select('id').where('id', '=', id).forUpdate().executeTakeFirst()
  return stateById(trx, id)
}

export async function activeStateForTag(trx: Transaction<Database>, siteId: number, tag: string) {
  return trx
    .selectFrom('alarm_state')
    .selectAll()
    .where('site_id', '=', siteId)
    .where(sql<string>`lower(tag)`, '=', tag.toLowerCase())
    .where('status', '=', 'active')
    .forUpdate()
    .executeTakeFirst()
}

export async function listStates(
  db: Q,
  f: { siteIds: number[]; status?: 'active' | 'ended'; overdueAt?: Date; page: number; pageSize: number },
) {
  if (!f.siteIds.length) return { rows: [], total: 0 }
  let q = statesQuery(db).where('s.site_id', 'in', f.siteIds)
  if (f.status) q = q.where('s.status', '=', f.status)
  if (f.overdueAt) q = q.where('s.status', '=', 'active').where('s.until', '<=', f.overdueAt)
  const [rows, count] = await Promise.all([
    q
      .select(stateColumns)
      .orderBy('s.status')
      .orderBy('s.until')
      .limit(f.pageSize)
      .offset((f.page - 1) * f.pageSize)
      .execute(),
    q.select((eb) => eb.fn.countAll<number>().as('n')).executeTakeFirstOrThrow(),
  ])
  return { rows, total: Number(count.n) }
}

export async function limitForTag(q: Q, siteId: number, tag: string) {
  return q
    .selectFrom('limit_function')
    .select(['id', 'tag', 'priority', 'limit_class', 'sil', 'safety_related_alarm'])
    .where('site_id', '=', siteId)
    .where(sql<string>`lower(tag)`, '=', tag.toLowerCase())
    .orderBy('id')
    .executeTakeFirst()
}

export async function insertState(
  trx: Transaction<Database>,
  v: {
    siteId: number
    limitId: number | null
    tag: string
    kind: 'shelved' | 'suppressed' | 'out_of_service'
    reason: string
    userId: number
    now: Date
    until: Date
    changeRequestId: number | null
  },
) {
  const r = await trx
    .insertInto('alarm_state')
    .values({
      site_id: v.siteId,
      limit_id: v.limitId,
      tag: v.tag,
      kind: v.kind,
      reason: v.reason,
      started_by: v.userId,
      started_at: v.now,
      until: v.until,
      change_request_id: v.changeRequestId,
    })
    .returning('id')
    .executeTakeFirstOrThrow()
  return r.id
}

export async function setStateSignature(trx: Transaction<Database>, id: number, signatureId: number) {
  await trx.updateTable('alarm_state').set({ signature_id: signatureId }).where('id', '=', id).execute()
}

export async function endState(trx: Transaction<Database>, id: number, userId: number, now: Date, note: string) {
  await trx
    .updateTable('alarm_state')
    .set({ status: 'ended', ended_by: userId, ended_at: now, end_note: note })
    .where('id', '=', id)
    .execute()
}

export async function changeRequestSite(q: Q, id: number) {
  const r = await q.selectFrom('change_request').select('site_id').where('id', '=', id).executeTakeFirst()
  return r?.site_id ?? null
}

// ---- process data ----

export async function insertReplayUpload(db: Q, v: NewUpload & { instrumentId: number | null }) {
  const r = await db
    .insertInto('process_data_upload')
    .values({ ...uploadColumns(v), instrument_id: v.instrumentId })
    .returning('id')
    .executeTakeFirstOrThrow()
  return r.id
}

export const replayUploadById = (db: Q, id: number) =>
  db.selectFrom('process_data_upload').selectAll().where('id', '=', id).executeTakeFirst()

/** A page of the process-data uploads at the sites (at least one), newest first. */
export const listReplayUploads = (db: Q, siteIds: number[], page: Page) =>
  pageWithTotal(db.selectFrom('process_data_upload').where('site_id', 'in', siteIds), page, (q) =>
    q.selectAll().orderBy('id', 'desc'),
  )

export async function setReplayProgress(
  db: Q,
  id: number,
  p: { status?: AlarmUploadStatus; rowsRead?: number; series?: { index: number; name: string }[] },
) {
  await db
    .updateTable('process_data_upload')
    .set({ ...progressColumns(p), ...(p.series ? { series: JSON.stringify(p.series) } : {}) })
    .where('id', '=', id)
    .execute()
}

export async function finishReplayUpload(
  db: Q,
  id: number,
  r: FinishedUpload & { samplesStored: number; series: { index: number; name: string }[] },
) {
  await db
    .updateTable('process_data_upload')
    .set({ ...finishedColumns(r), samples_stored: r.samplesStored, series: JSON.stringify(r.series) })
    .where('id', '=', id)
    .execute()
}

/** One series of an upload, sorted by time, as typed arrays (seconds, values; NaN where the value is missing). */
export async function seriesSamples(pool: pg.Pool, uploadId: number, series: number) {
  const r = await pool.query({
    text:
      'SELECT (extract(epoch FROM t))::float8, value FROM process_sample ' +
      'WHERE upload_id = $1 AND series = $2 ORDER BY t',
    values: [uploadId, series],
    rowMode: 'array',
  })
  const n = r.rows.length
  const t = new Float64Array(n)
  const v = new Float64Array(n)
  for (let i = 0; i < n; i++) {
    const row = r.rows[i] as [number, number | null]
    t[i] = row[0]
    v[i] = row[1] ?? Number.NaN
  }
  return { t, v }
}

export async function limitsOnInstrument(db: Q, instrumentId: number) {
  return db
    .selectFrom('limit_function')
    .select([
      'limit_function.id',
      'limit_function.tag',
      'limit_function.site_id',
      'limit_function.direction',
      ...ALARM_SETTING_COLUMNS,
      'limit_function.response_time_min',
      'limit_function.status',
    ])
    .where((eb) =>
      eb.or([
        eb('limit_function.primary_instrument_id', '=', instrumentId),
        eb(
          'limit_function.id',
          'in',
          eb.selectFrom('limit_instrument').select('limit_id').where('instrument_id', '=', instrumentId),
        ),
      ]),
    )
    .orderBy('limit_function.tag')
    .execute()
}

export async function instrumentById(db: Q, id: number) {
  return db
    .selectFrom('instrument')
    .select(['id', 'site_id', 'tag', 'range_low', 'range_high', 'unit'])
    .where('id', '=', id)
    .executeTakeFirst()
}

/** The site with its policy (the alarm figures' thresholds). */
export function findSiteWithPolicy(db: Q, siteId: number) {
  return db.selectFrom('site').select(['id', 'code', 'name', 'policy']).where('id', '=', siteId).executeTakeFirst()
}

export function siteExists(db: Q, siteId: number) {
  return db.selectFrom('site').select('id').where('id', '=', siteId).executeTakeFirst()
}

export function areaSite(db: Q, areaId: number) {
  return db.selectFrom('area').select('site_id').where('id', '=', areaId).executeTakeFirst()
}

/** The primary instrument and site of a limit. */
export function limitInstrumentAndSite(db: Q, limitId: number) {
  return db
    .selectFrom('limit_function')
    .select(['primary_instrument_id', 'site_id'])
    .where('id', '=', limitId)
    .executeTakeFirst()
}

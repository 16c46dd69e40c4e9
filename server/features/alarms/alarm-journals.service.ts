import { logger } from '../../logger.ts'
import { rm } from 'node:fs/promises'
import type { AppAbility } from '../../../shared/abilities/index.ts'
import {
  ALARM_EVENT_KINDS,
  type AlarmEventKind,
  EVENT_CODE,
  JOURNAL_PRIORITIES,
} from '../../../shared/domain/alarm-figures.ts'
import {
  JOURNAL_COLUMNS,
  JOURNAL_REQUIRED_COLUMNS,
  type JournalColumn,
  type JournalMapping,
  JournalMappingSchema,
  type JournalUpload,
} from '../../../shared/schemas/alarms.ts'
import type { ListResult } from '../../../shared/schemas/common.ts'
import { authorize, readableRow } from '../../authorize.ts'
import type { AppDeps } from '../../deps.ts'
import type { AlarmJournalUploadTable } from '../../db/schema.ts'
import { validationFailed } from '../../errors.ts'
import type { CurrentUser } from '../../types/express.d.ts'
import { type AuditContext, appendAudit } from '../audit/audit.repository.ts'
import * as repo from './alarms.repository.ts'
import {
  copyLines,
  headerOf,
  isRefusal,
  progressReporter,
  runQueuedLoad,
  uploadFields,
  uploadFileName,
  uploadsPage,
} from './copy-load.ts'
import { copyText, createTimeParser, readRows, resolveColumns, sniffFile } from './file-rows.ts'
import type { Selectable } from 'kysely'

// The alarm-journal import: the upload is received to a temporary file, its header mapped (remembered per user),
// and the rest continues as a background job that streams the rows through COPY into a staging table and moves
// them into the month-partitioned journal in one transaction: all rows or none. docs/alarms.md.

/** Event words of control-system journals → event kinds (compared in lower case, spaces and dashes ignored). */
const WORDS_OF_KIND: Record<AlarmEventKind, string[]> = {
  active: ['active', 'alarm', 'alm', 'raised', 'in alarm', 'on', 'activated', 'come', 'came'],
  return: ['return', 'return to normal', 'rtn', 'normal', 'cleared', 'clear', 'off', 'inactive', 'gone', 'ok'],
  acknowledged: ['acknowledged', 'ack', 'acked', 'acknowledge'],
  shelved: ['shelved', 'shelve', 'shelf'],
  unshelved: ['unshelved', 'unshelve'],
  suppressed: ['suppressed', 'suppress', 'suppressed by design'],
  unsuppressed: ['unsuppressed', 'unsuppress'],
  out_of_service: ['out of service', 'oos', 'removed from service'],
  in_service: ['in service', 'returned to service', 'return to service', 'rts', 'back in service'],
}
const EVENT_WORDS: Record<string, AlarmEventKind> = {}
for (const kind of ALARM_EVENT_KINDS) for (const w of WORDS_OF_KIND[kind]) EVENT_WORDS[w.replace(/[\s_-]+/g, '')] = kind

const PRIORITY_WORDS: Record<string, number> = {
  low: 0,
  l: 0,
  medium: 1,
  med: 1,
  m: 1,
  high: 2,
  h: 2,
  critical: 3,
  emergency: 3,
  urgent: 3,
}
JOURNAL_PRIORITIES.forEach((p, i) => (PRIORITY_WORDS[p] = i))

const MAX_REJECTIONS_KEPT = 200

function toDto(r: Selectable<AlarmJournalUploadTable>): JournalUpload {
  return {
    ...uploadFields(r),
    rowsStored: Number(r.rows_stored),
    rowsDuplicate: Number(r.rows_duplicate),
    unmatchedTags: r.unmatched_tags,
    unmatchedTagCount: r.unmatched_tag_count,
    duplicateOf: r.duplicate_of,
    mapping: r.mapping,
    finishedAt: r.finished_at ? r.finished_at.toISOString() : null,
  }
}

async function siteExists(deps: AppDeps, siteId: number) {
  const s = await repo.siteExists(deps.db, siteId)
  if (!s) throw validationFailed({ siteId: ['The site does not exist'] }, 'The site does not exist')
}

export async function rememberedMapping(deps: AppDeps, userId: number): Promise<JournalMapping> {
  const m = await repo.rememberedJournalMapping(deps.db, userId)
  return Object.fromEntries(
    Object.entries(m).filter(([h, k]) => JournalMappingSchema.safeParse({ [h]: k }).success),
  ) as JournalMapping
}

const ALIASES: Record<string, JournalColumn> = {
  time: 'timestamp',
  'date/time': 'timestamp',
  datetime: 'timestamp',
  'event time': 'timestamp',
  'alarm tag': 'tag',
  source: 'tag',
  'event type': 'event',
  state: 'event',
  console: 'position',
  'operator position': 'position',
  description: 'message',
  text: 'message',
}

/**
 * Receives a journal file (already on disk): checks the file kind and maps the header, stores the upload as queued,
 * remembers the mapping for the user and starts the job. Refusals (bad file, no mapping) store nothing.
 */
export async function startJournalUpload(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  userId: number,
  file: { path: string; fileName: string },
  fields: { siteId: number; timeZone: string; mapping?: JournalMapping },
): Promise<JournalUpload> {
  try {
    await siteExists(deps, fields.siteId)
    authorize(ability, 'import', 'AlarmJournal', { siteId: fields.siteId })
    const { kind, delimiter } = await sniffFile(file.path)
    const headers = await headerOf(file.path, kind, delimiter)
    const remembered = await rememberedMapping(deps, userId)
    const { used } = resolveColumns(
      headers,
      JOURNAL_COLUMNS,
      JOURNAL_REQUIRED_COLUMNS,
      fields.mapping,
      remembered,
      ALIASES,
    )
    const now = deps.clock.now()
    const id = await deps.db.transaction().execute(async (trx) => {
      const id = await repo.insertJournalUpload(trx, {
        siteId: fields.siteId,
        userId,
        fileName: uploadFileName(file.fileName),
        fileKind: kind,
        timeZone: fields.timeZone,
        mapping: used,
        filePath: file.path,
        now,
      })
      await repo.rememberJournalMapping(
        trx,
        userId,
        Object.fromEntries(Object.entries({ ...remembered, ...used }).slice(-200)),
        now,
      )
      await appendAudit(trx, deps.clock, ctx, {
        action: 'alarm_journal.upload',
        entityType: 'alarm_journal_upload',
        entityId: id,
        after: { siteId: fields.siteId, fileName: file.fileName, timeZone: fields.timeZone, mapping: used },
      })
      return id
    })
    setImmediate(() => void runJournalUpload(deps, id, ctx))
    return toDto((await repo.journalUploadById(deps.db, id))!)
  } catch (err) {
    await rm(file.path, { force: true })
    throw err
  }
}

class NothingUsable extends Error {}

/**
 * The job: streams the file's rows into a staging table with COPY, reports progress, then in the same transaction
 * creates the months' partitions, moves the rows into the journal (skipping rows already there) and lists tags the
 * register does not know. A file with no usable row, or one that breaks off, writes nothing to the journal.
 */
export async function runJournalUpload(deps: AppDeps, id: number, ctx: AuditContext): Promise<void> {
  const rejections: { row: number; message: string }[] = []
  let rowsRead = 0
  let rejected = 0
  const reject = (row: number, message: string) => {
    rejected++
    if (rejections.length < MAX_REJECTIONS_KEPT) rejections.push({ row, message })
  }
  let checksum: string | null = null
  await runQueuedLoad(deps, `journal:${id}`, {
    find: () => repo.journalUploadById(deps.db, id),
    markRunning: () => repo.setJournalProgress(deps.db, id, { status: 'running' }),
    load: ({ upload, path, client, kind, delimiter, hashing }) =>
      repo
        .kyselyOn(client)
        .transaction()
        .execute(async (trx) => {
          await repo.createJournalStage(trx)
          const parseTime = createTimeParser(upload.time_zone)
          const progress = progressReporter((rowsRead) =>
            repo.setJournalProgress(deps.db, id, { rowsRead, rowsRejected: rejected }),
          )
          let index: Partial<Record<JournalColumn, number>> = {}
          let rowNo = 0
          await copyLines(
            client,
            'COPY alarm_stage (t_ms, tag, kind, priority, position, message) FROM STDIN',
            async (write) => {
              for await (const cells of readRows(path, kind, delimiter)) {
                rowNo++
                if (rowNo === 1) {
                  index = resolveColumns(
                    cells,
                    JOURNAL_COLUMNS,
                    JOURNAL_REQUIRED_COLUMNS,
                    upload.mapping,
                    {},
                    ALIASES,
                  ).index
                  continue
                }
                rowsRead++
                await write(journalLine(cells, index, parseTime, rowNo, reject) ?? '')
                await progress(rowsRead)
              }
            },
          )
          const staged = await repo.stageRange(trx)
          if (!staged.count || staged.lo === null || staged.hi === null) throw new NothingUsable()
          await repo.ensureJournalPartitions(trx, new Date(staged.lo), new Date(staged.hi))
          const stored = await repo.loadStagedJournal(trx, upload.site_id, id)
          const unmatched = await repo.unmatchedStagedTags(trx, upload.site_id)
          checksum = await hashing
          const duplicateOf = await repo.earlierUploadWithChecksum(trx, upload.site_id, checksum, id)
          const now = deps.clock.now()
          await repo.finishJournalUpload(trx, id, {
            status: 'done',
            rowsRead,
            rowsStored: stored,
            rowsDuplicate: staged.count - stored,
            rowsRejected: rejected,
            rejections,
            unmatchedTags: unmatched.tags,
            unmatchedTagCount: unmatched.count,
            duplicateOf,
            error: null,
            firstAt: new Date(staged.lo),
            lastAt: new Date(staged.hi),
            checksum,
            now,
          })
          await appendAudit(trx, deps.clock, ctx, {
            action: 'alarm_journal.import',
            entityType: 'alarm_journal_upload',
            entityId: id,
            after: {
              rowsRead,
              rowsStored: stored,
              rowsDuplicate: staged.count - stored,
              rowsRejected: rejected,
              checksum,
            },
          })
        }),
    fail: async (err) => {
      const message =
        err instanceof NothingUsable
          ? `No usable row: ${rejected} of ${rowsRead} rows were rejected (see the reasons); nothing was stored`
          : isRefusal(err)
            ? err.message
            : 'The journal could not be loaded; nothing was stored'
      if (!(err instanceof NothingUsable) && !isRefusal(err))
        logger.error({ component: 'alarms', uploadId: id, err }, 'alarm journal upload failed')
      await repo.finishJournalUpload(deps.db, id, {
        status: 'failed',
        rowsRead,
        rowsStored: 0,
        rowsDuplicate: 0,
        rowsRejected: rejected,
        rejections,
        unmatchedTags: [],
        unmatchedTagCount: 0,
        duplicateOf: null,
        error: message,
        firstAt: null,
        lastAt: null,
        checksum,
        now: deps.clock.now(),
      })
    },
  })
}

/** One journal row as a COPY line, or null (and a rejection) when a cell cannot be read. */
function journalLine(
  cells: string[],
  index: Partial<Record<JournalColumn, number>>,
  parseTime: (s: string) => number,
  rowNo: number,
  reject: (row: number, message: string) => void,
): string | null {
  const tsText = cells[index.timestamp!] ?? ''
  const t = parseTime(tsText)
  if (t !== t) {
    reject(rowNo, `timestamp "${tsText.slice(0, 40)}" is not a date and time (YYYY-MM-DD hh:mm:ss)`)
    return null
  }
  const tag = cells[index.tag!] ?? ''
  if (!tag || tag.length > 100) {
    reject(rowNo, tag ? 'the tag is longer than 100 characters' : 'the tag is empty')
    return null
  }
  const eventText = cells[index.event!] ?? ''
  const kind = EVENT_WORDS[eventText.toLowerCase().replace(/[\s_-]+/g, '')]
  if (kind === undefined) {
    reject(rowNo, `event "${eventText.slice(0, 40)}" is not understood (active, return, acknowledged, shelved, …)`)
    return null
  }
  let priority = -1
  if (index.priority !== undefined) {
    const p = (cells[index.priority] ?? '').toLowerCase()
    if (p) {
      const code = PRIORITY_WORDS[p]
      if (code === undefined) {
        reject(rowNo, `priority "${p.slice(0, 40)}" is not low, medium, high or critical`)
        return null
      }
      priority = code
    }
  }
  const position = index.position !== undefined ? (cells[index.position] ?? '').slice(0, 100) : ''
  const message = index.message !== undefined ? (cells[index.message] ?? '').slice(0, 500) : ''
  return `${t}\t${copyText(tag)}\t${EVENT_CODE[kind]}\t${priority}\t${copyText(position)}\t${copyText(message)}\n`
}

export async function getJournalUpload(deps: AppDeps, ability: AppAbility, id: number): Promise<JournalUpload> {
  return toDto(readableRow(await repo.journalUploadById(deps.db, id), ability, 'AlarmJournal', 'Alarm journal upload'))
}

export function listJournalUploads(
  deps: AppDeps,
  user: CurrentUser | null,
  q: { siteId?: number; page: number; pageSize: number },
): Promise<ListResult<JournalUpload>> {
  return uploadsPage((siteIds, page) => repo.listJournalUploads(deps.db, siteIds, page), user, q, toDto)
}

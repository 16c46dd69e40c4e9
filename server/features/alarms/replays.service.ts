import { logger } from '../../logger.ts'
import { rm } from 'node:fs/promises'
import type { Selectable } from 'kysely'
import type { AppAbility } from '../../../shared/abilities/index.ts'
import {
  type LimitSettings,
  replayLimit,
  type ReplayResult,
  suggestSettings,
} from '../../../shared/domain/alarm-limit-state.ts'
import type { ReplayRun, ReplayRunInput, ReplayUpload } from '../../../shared/schemas/alarms.ts'
import type { ListResult } from '../../../shared/schemas/common.ts'
import { authorize, readableRow } from '../../authorize.ts'
import type { AppDeps } from '../../deps.ts'
import type { ProcessDataUploadTable } from '../../db/schema.ts'
import { notFound, unprocessable, validationFailed } from '../../errors.ts'
import type { CurrentUser } from '../../types/express.d.ts'
import { type AuditContext, appendAudit } from '../audit/audit.repository.ts'
import { badFile } from '../register/imports.service.ts'
import { sitePolicy } from './alarm-figures.service.ts'
import * as repo from './alarms.repository.ts'
import * as load from './copy-load.ts'
import { createTimeParser, readRows, resolveColumns, sniffFile } from './file-rows.ts'

// Replays: a process-data export (a time column and one value column per tag) is streamed into process_sample by
// COPY as a background job; a replay runs every limit of the instrument through the one state machine of
// shared/domain/alarm-limit-state.ts, with a what-if and a suggestion. docs/alarms.md.

const MAX_SERIES = 50
const NUMBER = /^[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$/

function toDto(r: Selectable<ProcessDataUploadTable>): ReplayUpload {
  return {
    ...load.uploadFields(r),
    instrumentId: r.instrument_id,
    series: r.series,
    samplesStored: Number(r.samples_stored),
  }
}

const TIME_ALIASES = { time: 'timestamp', date: 'timestamp', datetime: 'timestamp', 'date/time': 'timestamp' } as const

function seriesOf(headers: string[], timeIndex: number) {
  const series = headers.flatMap((name, i) => (i === timeIndex || !name ? [] : [{ column: i, name }]))
  if (!series.length) throw badFile('The file has a time column but no value column')
  if (series.length > MAX_SERIES) throw badFile(`The file has ${series.length} value columns; at most ${MAX_SERIES}`)
  return series.map((s, index) => ({ ...s, index }))
}

export async function startReplayUpload(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  userId: number,
  file: { path: string; fileName: string },
  fields: { siteId: number; instrumentId?: number; timeZone: string },
): Promise<ReplayUpload> {
  try {
    await sitePolicy(deps, fields.siteId)
    authorize(ability, 'create', 'Replay', { siteId: fields.siteId })
    if (fields.instrumentId) {
      const inst = await repo.instrumentById(deps.db, fields.instrumentId)
      if (!inst || inst.site_id !== fields.siteId)
        throw validationFailed({ instrumentId: ['No such instrument at this site'] }, 'No such instrument at this site')
    }
    const { kind, delimiter } = await sniffFile(file.path)
    const headers = await load.headerOf(file.path, kind, delimiter)
    const { index } = resolveColumns(
      headers,
      ['timestamp'] as const,
      ['timestamp'] as const,
      undefined,
      {},
      TIME_ALIASES,
    )
    const series = seriesOf(headers, index.timestamp!)
    const now = deps.clock.now()
    const id = await deps.db.transaction().execute(async (trx) => {
      const id = await repo.insertReplayUpload(trx, {
        siteId: fields.siteId,
        instrumentId: fields.instrumentId ?? null,
        userId,
        fileName: load.uploadFileName(file.fileName),
        timeZone: fields.timeZone,
        filePath: file.path,
        now,
      })
      await repo.setReplayProgress(trx, id, { series: series.map(({ index, name }) => ({ index, name })) })
      await appendAudit(trx, deps.clock, ctx, {
        action: 'process_data.upload',
        entityType: 'process_data_upload',
        entityId: id,
        after: { siteId: fields.siteId, instrumentId: fields.instrumentId ?? null, fileName: file.fileName },
      })
      return id
    })
    setImmediate(() => void runReplayUpload(deps, id))
    return toDto((await repo.replayUploadById(deps.db, id))!)
  } catch (err) {
    await rm(file.path, { force: true })
    throw err
  }
}

/** The job: streams the samples into process_sample with COPY in one transaction (all or nothing). */
export async function runReplayUpload(deps: AppDeps, id: number): Promise<void> {
  const rejections: { row: number; message: string }[] = []
  let rowsRead = 0
  let rejected = 0
  let samples = 0
  let first = Infinity
  let last = -Infinity
  let checksum: string | null = null
  let series: { index: number; name: string }[] = []
  await load.runQueuedLoad(deps, `replay:${id}`, {
    find: async () => {
      const upload = await repo.replayUploadById(deps.db, id)
      series = upload?.series ?? []
      return upload
    },
    markRunning: () => repo.setReplayProgress(deps.db, id, { status: 'running' }),
    load: async ({ upload, path, client, kind, delimiter, hashing }) => {
      const kdb = repo.kyselyOn(client)
      await kdb.transaction().execute(async () => {
        const parseTime = createTimeParser(upload.time_zone)
        let timeCol = 0
        let cols: { column: number; index: number; name: string }[] = []
        let rowNo = 0
        const progress = load.progressReporter((rowsRead) => repo.setReplayProgress(deps.db, id, { rowsRead }))
        await load.copyLines(client, 'COPY process_sample (upload_id, series, t, value) FROM STDIN', async (write) => {
          for await (const cells of readRows(path, kind, delimiter)) {
            rowNo++
            if (rowNo === 1) {
              const { index } = resolveColumns(
                cells,
                ['timestamp'] as const,
                ['timestamp'] as const,
                undefined,
                {},
                TIME_ALIASES,
              )
              timeCol = index.timestamp!
              cols = seriesOf(cells, timeCol)
              series = cols.map(({ index, name }) => ({ index, name }))
              continue
            }
            rowsRead++
            const t = parseTime(cells[timeCol] ?? '')
            if (t !== t) {
              rejected++
              if (rejections.length < 200)
                rejections.push({
                  row: rowNo,
                  message: `time "${(cells[timeCol] ?? '').slice(0, 40)}" is not a date and time`,
                })
              continue
            }
            const ts = new Date(t).toISOString()
            let bad = ''
            let line = ''
            for (const c of cols) {
              const text = cells[c.column] ?? ''
              if (text === '') continue
              if (!NUMBER.test(text)) {
                bad = `${c.name}: "${text.slice(0, 40)}" is not a number`
                break
              }
              line += `${id}\t${c.index}\t${ts}\t${text}\n`
            }
            if (bad) {
              rejected++
              if (rejections.length < 200) rejections.push({ row: rowNo, message: bad })
              continue
            }
            if (line) {
              samples += line.split('\n').length - 1
              if (t < first) first = t
              if (t > last) last = t
            }
            await write(line)
            await progress(rowsRead)
          }
        })
        if (!samples) throw badFile(`No usable row: ${rejected} of ${rowsRead} rows were rejected; nothing was stored`)
        checksum = await hashing
        await repo.finishReplayUpload(kdb, id, {
          status: 'done',
          rowsRead,
          samplesStored: samples,
          rowsRejected: rejected,
          rejections,
          series,
          error: null,
          firstAt: new Date(first),
          lastAt: new Date(last),
          checksum,
          now: deps.clock.now(),
        })
      })
    },
    fail: async (err) => {
      const message = load.isRefusal(err) ? err.message : 'The process data could not be loaded; nothing was stored'
      if (!load.isRefusal(err)) logger.error({ component: 'alarms', uploadId: id, err }, 'process data upload failed')
      await repo.finishReplayUpload(deps.db, id, {
        status: 'failed',
        rowsRead,
        samplesStored: 0,
        rowsRejected: rejected,
        rejections,
        series,
        error: message,
        firstAt: null,
        lastAt: null,
        checksum,
        now: deps.clock.now(),
      })
    },
  })
}

const readableReplay = async (deps: AppDeps, ability: AppAbility, id: number) =>
  readableRow(await repo.replayUploadById(deps.db, id), ability, 'Replay', 'Process-data upload')

export async function getReplayUpload(deps: AppDeps, ability: AppAbility, id: number) {
  return toDto(await readableReplay(deps, ability, id))
}

export function listReplayUploads(
  deps: AppDeps,
  user: CurrentUser | null,
  q: { siteId?: number; page: number; pageSize: number },
): Promise<ListResult<ReplayUpload>> {
  return load.uploadsPage((siteIds, page) => repo.listReplayUploads(deps.db, siteIds, page), user, q, toDto)
}

const iso = (sec: number) => new Date(Math.round(sec * 1000)).toISOString()
const MAX_LISTED = 500

function outcome(r: ReplayResult, firstBefore: number | undefined) {
  return {
    deadband: r.settings.deadband,
    onDelaySec: r.settings.onDelaySec,
    offDelaySec: r.settings.offDelaySec,
    activations: r.activations.slice(0, MAX_LISTED).map(iso),
    returns: r.returns.slice(0, MAX_LISTED).map(iso),
    firstResetAllowed: r.firstResetAllowed.slice(0, MAX_LISTED).map((x) => (x === x ? iso(x) : null)),
    timeInAlarmSec: r.timeInAlarmSec,
    chatterEpisodes: r.chatterEpisodes.length,
    firstActivationDelaySec: firstBefore === undefined || !r.activations.length ? null : r.activations[0] - firstBefore,
  }
}

/** Min and max of each of about `buckets` equal slices, in time order (keeps spikes visible). */
function trendOf(t: Float64Array, v: Float64Array, buckets = 1000) {
  const outT: string[] = []
  const outV: (number | null)[] = []
  const n = t.length
  const size = Math.max(1, Math.ceil(n / buckets))
  for (let b = 0; b < n; b += size) {
    let lo = -1
    let hi = -1
    for (let i = b; i < Math.min(n, b + size); i++) {
      if (v[i] !== v[i]) continue
      if (lo < 0 || v[i] < v[lo]) lo = i
      if (hi < 0 || v[i] > v[hi]) hi = i
    }
    if (lo < 0) continue
    for (const i of lo === hi ? [lo] : lo < hi ? [lo, hi] : [hi, lo]) {
      outT.push(iso(t[i]))
      outV.push(v[i])
    }
  }
  return { t: outT, v: outV }
}

/** Replays every limit of the upload's instrument (or the one limit asked for), with a what-if and a suggestion. */
export async function runReplay(
  deps: AppDeps,
  ability: AppAbility,
  id: number,
  input: ReplayRunInput,
): Promise<ReplayRun> {
  const upload = await readableReplay(deps, ability, id)
  if (upload.status !== 'done')
    throw unprocessable('The process data is not loaded yet (or failed); wait for the upload')
  let instrumentId = upload.instrument_id
  let limits: Awaited<ReturnType<typeof repo.limitsOnInstrument>> = []
  if (input.limitId) {
    const lim = await repo.limitInstrumentAndSite(deps.db, input.limitId)
    if (!lim || lim.site_id !== upload.site_id) throw notFound('Limit')
    instrumentId = lim.primary_instrument_id
  }
  if (!instrumentId) throw unprocessable('Choose the instrument (or a limit) the process data belongs to')
  const instrument = (await repo.instrumentById(deps.db, instrumentId))!
  limits = (await repo.limitsOnInstrument(deps.db, instrumentId)).filter(
    (l) => !input.limitId || l.id === input.limitId,
  )
  const series =
    input.series !== undefined
      ? upload.series.find((s) => s.index === input.series)
      : (upload.series.find((s) => s.name.toLowerCase() === instrument.tag.toLowerCase()) ?? upload.series[0])
  if (!series) throw validationFailed({ series: ['No such column in the upload'] }, 'No such column in the upload')
  const { alarms } = await sitePolicy(deps, upload.site_id)
  const chatter = { count: alarms.chatterCount, windowSec: alarms.chatterWindowSec }
  const { t, v } = await repo.seriesSamples(deps.pool, id, series.index)
  const span = Number(instrument.range_high) - Number(instrument.range_low)
  const results: ReplayRun['limits'] = []
  for (const l of limits) {
    const deadband = l.deadband_unit === 'percent_span' ? (Number(l.deadband) / 100) * span : Number(l.deadband)
    const present: LimitSettings = {
      direction: l.direction === 'low' ? 'low' : 'high',
      setpoint: Number(l.setpoint),
      deadband,
      onDelaySec: Number(l.on_delay_sec),
      offDelaySec: Number(l.off_delay_sec),
      latching: l.latching,
    }
    const responseSec = l.response_time_min !== null ? Number(l.response_time_min) * 60 : alarms.defaultResponseSec
    const before = replayLimit(t, v, present, chatter)
    const first = before.activations[0]
    const after = input.whatIf ? replayLimit(t, v, { ...present, ...input.whatIf }, chatter) : null
    // candidate deadbands: 0.25 … 5 % of the span (common practice ranges; docs/domain/alarm-figures.md)
    const suggestion = suggestSettings(t, v, present, {
      deadbands: [deadband, ...[0.25, 0.5, 1, 2, 5].map((p) => (p / 100) * span)].filter((d) => d >= deadband),
      onDelays: [present.onDelaySec, 0, 2, 5, 15, 60].filter((d) => d >= present.onDelaySec),
      offDelays: [present.offDelaySec, 0, 5, 15, 60].filter((d) => d >= present.offDelaySec),
      maxDelaySec: responseSec,
      chatter,
    })
    results.push({
      limitId: l.id,
      tag: l.tag,
      direction: present.direction,
      setpoint: present.setpoint,
      latching: l.latching,
      responseSec,
      before: outcome(before, first),
      after: after ? outcome(after, first) : null,
      suggestion: suggestion ? outcome(suggestion.result, first) : null,
    })
  }
  return { uploadId: id, series, samples: t.length, trend: trendOf(t, v), limits: results }
}

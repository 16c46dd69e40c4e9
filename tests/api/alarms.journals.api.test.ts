import type { Express } from 'express'
import { beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { type ApiAgent, signedIn, siteIdByCode } from './helpers/agent.ts'
import { useTestDb } from './helpers/test-db.ts'
import { countRows } from './helpers/factories.ts'

const ctx = useTestDb()
let app: Express
let eng: ApiAgent
let op: ApiAgent
let siteId: number

function upload(
  a: ApiAgent,
  body: string | Buffer,
  o: { timeZone?: string; mapping?: Record<string, string>; name?: string } = {},
) {
  return a.upload(
    '/api/alarm-journals',
    { siteId, timeZone: o.timeZone ?? 'UTC', mapping: o.mapping && JSON.stringify(o.mapping) },
    { name: o.name ?? 'journal.csv', content: body },
  )
}

/** Polls the upload until its job has finished (done or failed). */
async function finished(a: ApiAgent, id: number) {
  const deadline = Date.now() + 20_000
  for (;;) {
    const r = await a.get(`/api/alarm-journals/${id}`).expect(200)
    if (r.body.status === 'done' || r.body.status === 'failed') return r.body
    if (Date.now() > deadline) throw new Error(`upload ${id} still ${r.body.status}`)
    await new Promise((res) => setTimeout(res, 50))
  }
}

async function counts() {
  const n = async (t: 'alarm_event' | 'alarm_journal_upload') => countRows(ctx.db, t)
  return { events: await n('alarm_event'), uploads: await n('alarm_journal_upload') }
}

// a journal exported with the control system's own headers; times are local to Europe/Vienna (CEST = UTC+2 in July)
const JOURNAL = [
  'Event Time;Alarm Source;What;Prio;Console;Text',
  '2026-07-01 12:00:00;TAH-101;ACTIVE;high;CON-1;Reactor temperature high',
  '2026-07-01 12:00:30;TAH-101;RTN;high;CON-1;',
  '2026-07-01 12:01:00;tah-101;Active;High;CON-1;lower-case tag',
  '2026-07-01 12:02:00;PAL-7;ALARM;low;CON-1;',
  '2026-07-01 12:03:00;PAL-7;SHELVED;low;CON-1;shelved with no record',
  'not a time;PAL-7;ALARM;low;CON-1;',
  '2026-07-01 12:04:00;PAL-7;exploded;low;CON-1;',
].join('\n')
const MAPPING = {
  'Event Time': 'timestamp',
  'Alarm Source': 'tag',
  What: 'event',
  Prio: 'priority',
  Console: 'position',
  Text: 'message',
}

beforeAll(async () => {
  app = createApp(ctx, { serveClient: false })
  eng = await signedIn(app, 'engineer')
  op = await signedIn(app, 'operator')
  siteId = await siteIdByCode(eng, 'FHR')
})

describe('alarm journal upload', () => {
  let firstId = 0
  it('loads the rows in the background, converts the file time zone and reports rejected rows and unknown tags', async () => {
    const res = await upload(eng, JOURNAL, { timeZone: 'Europe/Vienna', mapping: MAPPING }).expect(202)
    expect(res.body.status).toMatch(/queued|running|done/)
    const done = await finished(eng, res.body.id)
    firstId = done.id
    expect(done).toMatchObject({ status: 'done', rowsRead: 7, rowsStored: 5, rowsDuplicate: 0, rowsRejected: 2 })
    expect(done.rejections).toEqual([
      { row: 7, message: expect.stringContaining('"not a time" is not a date and time') },
      { row: 8, message: expect.stringContaining('"exploded" is not understood') },
    ])
    // 12:00 in Vienna in July (UTC+2) is 10:00 UTC
    expect(done.firstAt).toBe('2026-07-01T10:00:00.000Z')
    expect(done.unmatchedTags).toEqual(['PAL-7', 'TAH-101'])
    expect((await counts()).events).toBe(5)
  })

  it('recognises the same file again: nothing is counted twice, and the mapping was remembered', async () => {
    const res = await upload(eng, JOURNAL, { timeZone: 'Europe/Vienna' }).expect(202)
    const done = await finished(eng, res.body.id)
    expect(done).toMatchObject({ status: 'done', rowsStored: 0, rowsDuplicate: 5, duplicateOf: firstId })
    expect((await counts()).events).toBe(5)
    expect((await eng.get('/api/alarm-journals/mapping').expect(200)).body.mapping).toMatchObject(MAPPING)
  })

  it('figures count the stored annunciations and list the shelve event without a record as a finding', async () => {
    const f = (
      await eng.get(`/api/alarm-figures?siteId=${siteId}&from=2026-07-01T00:00:00Z&to=2026-07-02T00:00:00Z`).expect(200)
    ).body
    // active events: TAH-101 12:00, tah-101 12:01, PAL-7 12:02 (the ALARM word) → 3
    expect(f.annunciated).toBe(3)
    expect(f.badActors[0]).toMatchObject({ tag: 'TAH-101', count: 2 })
    expect(f.findings.shelvesWithoutRecord).toEqual([{ tag: 'PAL-7', at: '2026-07-01T10:03:00.000Z' }])
    expect(f.targets.per10Min.source).toMatch(/ISA-18.2/)
  })

  it('leaves the events of a tag the register holds as an alert out of the figures', async () => {
    // an alert is not an alarm and does not load the operator (ISA-18.2-2016 separates alerts from alarms; from memory)
    const area = (await eng.get(`/api/areas?siteId=${siteId}`).expect(200)).body.items[0] as { id: number }
    const proc = await eng.created('/api/processes', { areaId: area.id, name: 'Slop tank T-77' })
    const inst = await eng.created('/api/instruments', {
      processId: proc.id,
      tag: 'LT-77',
      measuredVariable: 'level',
      unit: '%',
      rangeLow: 0,
      rangeHigh: 100,
      normalLow: 20,
      normalHigh: 70,
      designLow: null,
      designHigh: null,
      burnout: 'downscale',
      signal: { kind: 'current', sqrtExtraction: false },
      deviceKind: 'control_system',
    })
    await eng
      .post('/api/limits', {
        processId: proc.id,
        instrumentIds: [inst.id],
        tag: 'LA-77',
        direction: 'high',
        limitClass: 'alert',
        setpoint: 85,
        deadband: 1,
        severity: 'minor',
        testIntervalMonths: 24,
        operatorResponse: 'Plan a transfer to the slop system',
      })
      .expect(201)
    const journal = [
      'time,tag,event,priority,position',
      '2026-08-01 10:00:00,LA-77,active,low,CON-1',
      '2026-08-01 10:05:00,LA-77,return,low,CON-1',
      '2026-08-01 10:10:00,LA-77,active,low,CON-1',
      '2026-08-01 10:20:00,TAH-101,active,high,CON-1',
    ].join('\n')
    const mapping = { time: 'timestamp', tag: 'tag', event: 'event', priority: 'priority', position: 'position' }
    const done = await finished(eng, (await upload(eng, journal, { mapping }).expect(202)).body.id)
    expect(done).toMatchObject({ status: 'done', rowsStored: 4 })
    const f = (
      await eng.get(`/api/alarm-figures?siteId=${siteId}&from=2026-08-01T00:00:00Z&to=2026-08-02T00:00:00Z`).expect(200)
    ).body
    // only TAH-101's activation (unknown to the register, so counted); LA-77's two activations are an alert's
    expect(f.annunciated).toBe(1)
    expect(f.badActors.map((b: { tag: string }) => b.tag)).toEqual(['TAH-101'])
  })

  it('counts an alarm activated before the period and still active as stale and standing, not as annunciated', async () => {
    const journal = ['time,tag,event', '2026-09-01 08:00:00,LAL-9,active', '2026-09-02 06:00:00,LAL-9,acknowledged']
    const mapping = { time: 'timestamp', tag: 'tag', event: 'event' }
    const done = await finished(eng, (await upload(eng, journal.join('\n'), { mapping }).expect(202)).body.id)
    expect(done).toMatchObject({ status: 'done', rowsStored: 2 })
    const f = (
      await eng.get(`/api/alarm-figures?siteId=${siteId}&from=2026-09-02T00:00:00Z&to=2026-09-03T00:00:00Z`).expect(200)
    ).body
    // active from 1 September 08:00 to the period's end on 3 September 00:00: 40 h, over the 24 h of a stale alarm
    expect(f.annunciated).toBe(0)
    expect(f.standing).toEqual(['LAL-9'])
    expect(f.stale).toEqual([{ tag: 'LAL-9', since: '2026-09-01T08:00:00.000Z', hours: 40 }])
  })

  it('a month report is a PDF', async () => {
    const r = await eng.get(`/api/alarm-figures/report.pdf?siteId=${siteId}&month=2026-07`).expect(200)
    expect(r.headers['content-type']).toBe('application/pdf')
  })
})

describe('bad files and refusals: a clear 4xx (or a failed upload) and nothing written', () => {
  it.each([
    ['an empty file', '', 400, /empty/],
    ['no event column', 'time,tag\n2026-07-01 10:00:00,X', 400, /no column for event/],
    ['binary data', Buffer.from([0x00, 0x01, 0x02, 0x03, 0x10, 0x41]), 400, /binary/],
    ['an old Excel workbook', Buffer.from([0xd0, 0xcf, 0x11, 0xe0, 0xa1, 0xb1]), 400, /\.xls/],
  ])('%s', async (_name, body, status, message) => {
    const before = await counts()
    const r = await upload(eng, body as string | Buffer).expect(status)
    expect(r.body.error.message).toMatch(message)
    expect(await counts()).toEqual(before)
  })

  it('an unknown time zone', async () => {
    const before = await counts()
    const r = await upload(eng, JOURNAL, { timeZone: 'Mars/Olympus' }).expect(400)
    expect(r.body.error.details.fields.timeZone[0]).toMatch(/Unknown time zone/)
    expect(await counts()).toEqual(before)
  })

  it('an operator may not import a journal', async () => {
    const before = await counts()
    await upload(op, JOURNAL).expect(403)
    expect(await counts()).toEqual(before)
  })

  it('a file with no usable row fails and stores no event', async () => {
    const before = await counts()
    const r = await upload(eng, 'timestamp,tag,event\nyesterday,X,active\n2026-07-01 10:00:00,Y,bogus').expect(202)
    const done = await finished(eng, r.body.id)
    expect(done.status).toBe('failed')
    expect(done.error).toMatch(/No usable row: 2 of 2 rows were rejected/)
    expect(done.rejections).toHaveLength(2)
    expect((await counts()).events).toBe(before.events)
  })

  it('a file that breaks off in the middle (bad quoting) stores nothing, not even the good rows before it', async () => {
    const before = await counts()
    const good = Array.from({ length: 50 }, (_, i) => `2026-08-01 10:${String(i).padStart(2, '0')}:00,OK-${i},active`)
    const body = [
      'timestamp,tag,event',
      ...good,
      '2026-08-01 11:00:00,"BROKEN,active',
      '2026-08-01 11:01:00,Z,active',
    ].join('\n')
    const done = await finished(eng, (await upload(eng, body).expect(202)).body.id)
    expect(done.status).toBe('failed')
    expect(done.error).toMatch(/CSV cannot be read/)
    expect((await counts()).events).toBe(before.events)
  })
})

import { createHash } from 'node:crypto'
import ExcelJS from 'exceljs'
import type { Express } from 'express'
import Papa from 'papaparse'
import { beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { DEMO_PASSWORD } from '../../server/seed/demo.ts'
import { HISTORY_COLUMNS, type HistoryColumnKey } from '../../shared/schemas/history-import.ts'
import { type ApiAgent, signedIn } from './helpers/agent.ts'
import { buildActiveHeaterTrip } from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'

// The history import (docs/trip-tests.md#history-import): a migrating site's last tests, commissioning dates and past
// bypasses, with the register import's reader, column mapping, dry run and all-or-nothing commit. Fernhollow
// Refinery's zone is Europe/Berlin (CET = UTC+1 in winter, CEST = UTC+2 in summer, IANA time zone database).

const ctx = useTestDb()
let app: Express
let eng: ApiAgent
let tech: ApiAgent
let fhr = 0
// A: imported tests and a bypass; B: commissioned recently; C: commissioned long ago, never tested
const L = {} as Record<'a' | 'b' | 'c', { id: number; tag: string }>

type Cells = Partial<Record<HistoryColumnKey, string>>
function csv(rows: Cells[]): string {
  return Papa.unparse({
    fields: HISTORY_COLUMNS.map((c) => c.header),
    data: rows.map((r) => HISTORY_COLUMNS.map((c) => r[c.key] ?? '')),
  })
}

function upload(
  a: ApiAgent,
  body: string | Buffer,
  o: { siteId?: number; mapping?: Record<string, string>; dryRun?: boolean; fileName?: string } = {},
) {
  return a.upload(
    '/api/history-imports',
    { siteId: o.siteId ?? fhr, mapping: o.mapping && JSON.stringify(o.mapping), dryRun: o.dryRun },
    { name: o.fileName ?? 'history.csv', content: body },
  )
}
const commit = (a: ApiAgent, id: number) => a.post(`/api/history-imports/${id}/commit`)

async function counts() {
  const n = async (t: 'trip_test' | 'bypass') =>
    Number(
      (
        await ctx.db
          .selectFrom(t)
          .select((eb) => eb.fn.countAll<number>().as('n'))
          .executeTakeFirstOrThrow()
      ).n,
    )
  const audit = await ctx.db
    .selectFrom('audit_event')
    .select((eb) => eb.fn.countAll<number>().as('n'))
    .where('action', 'not like', 'session.%')
    .executeTakeFirstOrThrow()
  const commissioned = await ctx.db
    .selectFrom('limit_function')
    .select(['id', 'commissioned_at', 'test_status', 'test_due_date'])
    .where('id', 'in', [L.a.id, L.b.id, L.c.id])
    .orderBy('id')
    .execute()
  return { tests: await n('trip_test'), bypasses: await n('bypass'), audit: Number(audit.n), commissioned }
}

const limitNow = async (id: number) =>
  (await eng.get(`/api/limits/${id}`).expect(200)).body as {
    testStatus: string
    testDueDate: string | null
    lastFullPass: string | null
  }

/** The file of the commit test: two tests and a bypass on A, commissioning of B and C. */
const GOOD = () =>
  csv([
    {
      record: 'test',
      tag: L.a.tag,
      date: '2025-03-04',
      result: 'pass',
      asFound: '781.5',
      asLeft: '780',
      tester: 'R. Oakes',
      notes: 'Annual proof test',
    },
    { record: 'test', tag: L.a.tag, date: '2026-02-10', result: 'pass', tester: 'M. Tern' },
    {
      record: 'bypass',
      tag: L.a.tag,
      start: '2026-01-20 06:00',
      end: '2026-01-20 14:30',
      reason: 'Thermocouple replaced',
    },
    { record: 'commissioning', tag: L.b.tag, date: '2026-01-15' },
    { record: 'commissioning', tag: L.c.tag.toLowerCase(), date: '2024-01-10' },
  ])

beforeAll(async () => {
  ctx.clock.set('2026-06-01T10:00:00Z')
  app = createApp(ctx)
  eng = await signedIn(app, 'engineer')
  tech = await signedIn(app, 'technician')
  const approvers = [await signedIn(app, 'approver')]
  const crew = { eng, approvers, tech }
  for (const k of ['a', 'b', 'c'] as const) {
    const built = await buildActiveHeaterTrip(crew)
    L[k] = { id: built.limit.id, tag: built.limit.tag }
    fhr = built.site.id
  }
}, 240_000)

describe('history import (issue 12, item 3)', () => {
  it('before any import, limits without a test are never tested', async () => {
    for (const k of ['a', 'b', 'c'] as const) expect((await limitNow(L[k].id)).testStatus).toBe('never_tested')
  })

  it('a dry run says what each row would write and writes nothing but the batch', async () => {
    const before = await counts()
    const res = await upload(eng, GOOD()).expect(201)
    expect(res.body).toMatchObject({
      status: 'checked',
      fileName: 'history.csv',
      rowCount: 5,
      errors: [],
      summary: { tests: 2, commissioning: 2, bypasses: 1, unchanged: 0 },
    })
    expect(res.body.checksum).toBe(createHash('sha256').update(GOOD()).digest('hex'))
    expect(res.body.rows.map((r: { row: number; record: string }) => [r.row, r.record])).toEqual([
      [2, 'test'],
      [3, 'test'],
      [4, 'bypass'],
      [5, 'commissioning'],
      [6, 'commissioning'],
    ])
    expect(res.body.rows[0].summary).toBe('Test on 2025-03-04: passed, as-found 781.5, as-left 780, by R. Oakes')
    // 06:00 and 14:30 in Berlin in January (CET) are shown as the site's local times
    expect(res.body.rows[2].summary).toBe('Bypass from 2026-01-20 06:00 to 2026-01-20 14:30: Thermocouple replaced')
    expect(await counts()).toEqual(before)
  })

  it('a file with problems is refused all or nothing, with each problem and its row number', async () => {
    const before = await counts()
    const bad = csv([
      { record: 'test', tag: L.a.tag, date: '2025-05-05', result: 'pass' },
      { record: 'test', tag: 'NO-SUCH-TAG', date: '2025-05-05', result: 'pass' },
      { record: 'test', tag: L.a.tag, date: '2026-06-02', result: 'pass' },
      { record: 'bypass', tag: L.a.tag, start: '2026-01-20 14:00', end: '2026-01-20 06:00', reason: 'x' },
      { record: 'test', tag: L.a.tag, date: '2025-05-05', result: 'fail' },
      { record: 'calibration', tag: L.a.tag },
    ])
    const dry = await upload(eng, bad).expect(201)
    expect(dry.body.errors).toEqual([
      { row: 3, field: 'tag', message: `Limit NO-SUCH-TAG does not exist at FHR` },
      { row: 4, field: 'date', message: 'Date: 2026-06-02 lies in the future' },
      { row: 5, field: 'end', message: 'Bypass end: the end must lie after the start' },
      {
        row: 6,
        field: 'date',
        message: `${L.a.tag} already has the test of row 2 on 2025-05-05; one test per limit and day is imported`,
      },
      { row: 7, field: 'record', message: 'Record: write test, commissioning, bypass (not "calibration")' },
    ])
    expect(dry.body.rows.map((r: { row: number }) => r.row)).toEqual([2])
    const refused = await commit(eng, dry.body.id).expect(422)
    expect(refused.body.error.message).toBe('The import has 5 problem(s); nothing was written')
    expect(refused.body.error.details.errors).toHaveLength(5)
    const atOnce = await upload(eng, bad, { dryRun: false }).expect(422)
    expect(atOnce.body.error.details.errors).toHaveLength(5)
    expect(await counts()).toEqual(before)
  })

  it('the commit writes imported tests, the bypass and the commissioning dates, with one audit event', async () => {
    const before = await counts()
    const dry = await upload(eng, GOOD()).expect(201)
    const done = await commit(eng, dry.body.id).expect(200)
    expect(done.body).toMatchObject({ status: 'committed', summary: { tests: 2, commissioning: 2, bypasses: 1 } })
    const after = await counts()
    expect(after.tests).toBe(before.tests + 2)
    expect(after.bypasses).toBe(before.bypasses + 1)
    expect(after.audit).toBe(before.audit + 1)

    // the tests show as imported wherever they are listed, with the tester's name as text
    const list = (await eng.get(`/api/trip-tests?limitId=${L.a.id}`).expect(200)).body.items as {
      id: number
      source: string
      testerName: string | null
      passed: boolean
      performedAt: string
    }[]
    expect(list.map((t) => [t.source, t.testerName, t.passed])).toEqual([
      ['imported', 'M. Tern', true],
      ['imported', 'R. Oakes', true],
    ])
    // a bare date is noon at the site: 2025-03-04 12:00 CET = 11:00 UTC
    expect(list[1].performedAt).toBe('2025-03-04T11:00:00.000Z')
    const detail = (await eng.get(`/api/trip-tests/${list[1].id}`).expect(200)).body
    expect(detail).toMatchObject({
      source: 'imported',
      importBatchId: dry.body.id,
      asFound: 781.5,
      asLeft: 780,
      status: 'completed',
      notes: 'Annual proof test',
    })
    // an imported record is not signed or edited here
    expect(detail.actions.signPerformed.allowed).toBe(false)
    await tech
      .post(`/api/trip-tests/${list[1].id}/signatures`, { meaning: 'performed', password: DEMO_PASSWORD })
      .expect(409)

    // the last imported pass sets the due date: 2026-02-10 + 12 months
    expect(await limitNow(L.a.id)).toMatchObject({
      testStatus: 'ok',
      lastFullPass: '2026-02-10',
      testDueDate: '2027-02-10',
    })

    // the bypass, in force 8.5 h, counts in the review of its month
    const bypasses = (await eng.get(`/api/bypasses?limitId=${L.a.id}`).expect(200)).body.items as {
      source: string
      status: string
      activatedAt: string
      removedAt: string
      bypassedHours: number
    }[]
    expect(bypasses).toHaveLength(1)
    expect(bypasses[0]).toMatchObject({
      source: 'imported',
      status: 'removed',
      activatedAt: '2026-01-20T05:00:00.000Z',
      removedAt: '2026-01-20T13:30:00.000Z',
      bypassedHours: 8.5,
    })
    const manager = await signedIn(app, 'manager')
    const review = (
      await manager
        .get(`/api/bypass-review?siteId=${fhr}&from=2026-01-01T00:00:00Z&to=2026-02-01T00:00:00Z`)
        .expect(200)
    ).body as { charts: { hoursPerMonth: { month: string; hours: number }[] } }
    expect(review.charts.hoursPerMonth.find((m) => m.month === '2026-01')?.hours).toBe(8.5)

    // one audit event: the file's SHA-256, the importer and the row counts
    const events = await ctx.db
      .selectFrom('audit_event')
      .select(['action', 'entity_type', 'entity_id', 'actor_id', 'after'])
      .where('action', '=', 'history_import.commit')
      .execute()
    expect(events).toHaveLength(1)
    const me = (await eng.get('/api/session').expect(200)).body.user
    expect(events[0]).toMatchObject({ entity_type: 'ImportBatch', entity_id: String(dry.body.id), actor_id: me.id })
    expect(events[0].after).toMatchObject({
      kind: 'history',
      fileName: 'history.csv',
      checksum: createHash('sha256').update(GOOD()).digest('hex'),
      importer: { id: me.id, name: 'Selma Rookwood' },
      rowCount: 5,
      tests: 2,
      bypasses: 1,
      commissioning: 2,
    })

    await commit(eng, dry.body.id).expect(409)
  })

  it('"never tested" counts from the commissioning date', async () => {
    // B: commissioned 2026-01-15, 12-month interval: first test due 2027-01-15, ok today (2026-06-01)
    expect(await limitNow(L.b.id)).toMatchObject({ testStatus: 'ok', testDueDate: '2027-01-15', lastFullPass: null })
    // C: commissioned 2024-01-10: due 2025-01-10, past it and its grace: still never tested, now with the date it was due
    expect(await limitNow(L.c.id)).toMatchObject({
      testStatus: 'never_tested',
      testDueDate: '2025-01-10',
      lastFullPass: null,
    })
  })

  it('the same file again: every test and the bypass are duplicates, the commissioning dates unchanged', async () => {
    const dry = await upload(eng, GOOD()).expect(201)
    expect(dry.body.errors.map((e: { row: number; field: string }) => [e.row, e.field])).toEqual([
      [2, 'date'],
      [3, 'date'],
      [4, 'start'],
    ])
    expect(dry.body.errors[0].message).toBe(
      `${L.a.tag} already has an imported test on 2025-03-04; one test per limit and day is imported`,
    )
    expect(dry.body.errors[2].message).toBe(`The bypass overlaps an imported bypass of ${L.a.tag}`)
    expect(dry.body.summary).toMatchObject({ commissioning: 0, unchanged: 2 })
    const other = await upload(eng, csv([{ record: 'commissioning', tag: L.b.tag, date: '2025-12-01' }])).expect(201)
    expect(other.body.errors).toEqual([
      {
        row: 2,
        field: 'date',
        message: `${L.b.tag} was commissioned on 2026-01-15 by the register; change it on the limit's page, not by an import`,
      },
    ])
    // a file whose rows are all unchanged closes without writing anything
    const before = await counts()
    const same = await upload(eng, csv([{ record: 'commissioning', tag: L.b.tag, date: '2026-01-15' }])).expect(201)
    expect((await commit(eng, same.body.id).expect(200)).body.status).toBe('unchanged')
    expect(await counts()).toEqual(before)
  })

  it('maps other headers with a mapping, and reads XLSX', async () => {
    const wb = new ExcelJS.Workbook()
    const ws = wb.addWorksheet('Old system')
    ws.addRow(['Kind', 'TAG', 'Tested', 'Outcome', 'By whom'])
    ws.addRow(['test', L.b.tag, '2026-03-03', 'fail', 'K. Alder'])
    const buf = Buffer.from(await wb.xlsx.writeBuffer())
    const unmapped = await upload(eng, buf, { fileName: 'old.xlsx' }).expect(400)
    expect(unmapped.body.error.details.headers).toEqual(['Kind', 'TAG', 'Tested', 'Outcome', 'By whom'])
    expect(unmapped.body.error.details.missing).toEqual(['record'])
    const mapping = { Kind: 'record', TAG: 'tag', Tested: 'date', Outcome: 'result', 'By whom': 'tester' }
    const res = await upload(eng, buf, { fileName: 'old.xlsx', mapping, dryRun: false }).expect(201)
    expect(res.body).toMatchObject({ status: 'committed', summary: { tests: 1 }, mapping })
    // a failed test alone leaves B never passed: still due from commissioning
    expect(await limitNow(L.b.id)).toMatchObject({ testStatus: 'ok', testDueDate: '2027-01-15', lastFullPass: null })
  })

  it('answers 4xx for what a client can send wrong, and only safety engineers import', async () => {
    await eng.upload('/api/history-imports', { siteId: fhr }).expect(400)
    await upload(eng, GOOD(), { siteId: 999_999 }).expect(400)
    await eng
      .upload('/api/history-imports', { siteId: fhr, mapping: '{not json' }, { name: 'h.csv', content: GOOD() })
      .expect(400)
    await upload(eng, GOOD(), { mapping: { Record: 'nonsense' } }).expect(400)
    await upload(eng, Buffer.from([0xd0, 0xcf, 0x11, 0xe0, 1, 2, 3])).expect(400)
    await upload(eng, 'Record,Limit tag\n').expect(400)
    await upload(tech, GOOD()).expect(403)
    await commit(eng, 2_147_483_647).expect(404)
    await eng.post('/api/history-imports/abc/commit').expect(400)
    // a register batch is not a history batch, and the other way round
    const dry = await upload(eng, GOOD()).expect(201)
    await eng.post(`/api/imports/${dry.body.id}/commit`).expect(404)
  })
})

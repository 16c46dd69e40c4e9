import { createHash } from 'node:crypto'
import { readFileSync } from 'node:fs'
import { readFile } from 'node:fs/promises'
import ExcelJS from 'exceljs'
import type { Express } from 'express'
import Papa from 'papaparse'
import pg from 'pg'
import { beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { REGISTER_COLUMNS, type RegisterColumnKey } from '../../shared/schemas/register-io.ts'
import { ApiAgent, signedIn, signedInAs, newAccount, siteIdByCode } from './helpers/agent.ts'
import { CHANGE_PEOPLE, readyToImplement, countActionEvents, countRows } from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'

const ctx = useTestDb()

type Cells = Partial<Record<RegisterColumnKey, string>>

/** A CSV in the register file layout (every column, in file order). */
function csv(rows: Cells[]): string {
  return Papa.unparse({
    fields: REGISTER_COLUMNS.map((c) => c.header),
    data: rows.map((r) => REGISTER_COLUMNS.map((c) => r[c.key] ?? '')),
  })
}

/** A valid row: a thermocouple over-temperature trip on a new heater in the Utilities area. */
function row(n: number, over: Cells = {}): Cells {
  return {
    site: 'FHR',
    area: 'Utilities',
    process: 'Import test heater H-9',
    instrumentTag: `TT-9${n}`,
    measuredVariable: 'temperature',
    unit: '°C',
    rangeLow: '0',
    rangeHigh: '1200',
    normalLow: '300',
    normalHigh: '650',
    designHigh: '900',
    burnout: 'upscale',
    signal: 'thermocouple K',
    headTransmitter: 'no',
    deviceKind: 'limit_controller',
    tag: `TSHH-9${n}`,
    description: `Import test trip ${n}`,
    direction: 'high',
    limitClass: 'trip',
    setpoint: '780',
    deadband: '5',
    latching: 'yes',
    resetRole: 'operator',
    severity: 'severe',
    testIntervalMonths: '12',
    ...over,
  }
}

function upload(
  a: ApiAgent,
  body: string | Buffer,
  o: { siteId: number; fileName?: string; mapping?: Record<string, string>; dryRun?: boolean },
) {
  return a.upload(
    '/api/imports',
    { siteId: o.siteId, mapping: o.mapping && JSON.stringify(o.mapping), dryRun: o.dryRun },
    { name: o.fileName ?? 'register.csv', content: body },
  )
}

const commit = (a: ApiAgent, id: number) => a.post(`/api/imports/${id}/commit`)

/** Audit events a request wrote (sign-in events are not the import's). */
async function auditCount() {
  const r = await countActionEvents(ctx.db)
  return r
}

async function registerCounts() {
  const count = async (t: 'limit_function' | 'instrument' | 'process' | 'limit_revision' | 'instrument_revision') =>
    countRows(ctx.db, t)
  return {
    limits: await count('limit_function'),
    instruments: await count('instrument'),
    processes: await count('process'),
    limitRevisions: await count('limit_revision'),
    instrumentRevisions: await count('instrument_revision'),
    audit: await auditCount(),
  }
}

async function download(a: ApiAgent, url: string): Promise<Buffer> {
  return (await a.getBytes(url).expect(200)).body as Buffer
}

let app: Express
let eng: ApiAgent
let fhr = 0
let smp = 0

beforeAll(async () => {
  app = createApp(ctx)
  eng = await signedIn(app, 'engineer')
  fhr = await siteIdByCode(eng, 'FHR')
  smp = await siteIdByCode(eng, 'SMP')
})

describe('POST /api/imports (dry run)', () => {
  it('checks the shipped example file against the demo plant without errors and writes nothing to the register', async () => {
    const file = await readFile(new URL('../../docs/examples/register-import-example.csv', import.meta.url))
    const before = await registerCounts()
    const res = await upload(eng, file, { siteId: fhr, fileName: 'register-import-example.csv' }).expect(201)
    expect(res.body.errors).toEqual([])
    expect(res.body.status).toBe('checked')
    expect(res.body.rowCount).toBeGreaterThanOrEqual(10)
    expect(res.body.rowCount).toBeLessThanOrEqual(15)
    expect(res.body.summary).toEqual({ create: res.body.rowCount, update: 0, unchanged: 0 })
    expect(res.body.checksum).toBe(createHash('sha256').update(file).digest('hex'))
    expect(await registerCounts()).toEqual(before)
    const batch = await ctx.db
      .selectFrom('import_batch')
      .selectAll()
      .where('id', '=', res.body.id)
      .executeTakeFirstOrThrow()
    expect(batch).toMatchObject({
      site_id: fhr,
      file_name: 'register-import-example.csv',
      status: 'checked',
      row_count: res.body.rowCount,
      checksum: res.body.checksum,
    })
  })

  it("reports every problem as { row, field, message } with the spreadsheet's row numbers (header = row 1)", async () => {
    const text =
      csv([
        row(11),
        // a quoted line break keeps this record on one spreadsheet row (row 3)
        row(12, { description: 'two\nlines', setpoint: 'abc' }),
        row(13, { area: 'Loading Bay' }),
        row(14, { setpoint: '600' }), // a high trip inside the normal range (normal high 650)
        row(15, { setpoint: '780,5', sil: '4', signal: 'thermocouple Q' }),
        row(16, { tag: 'TSHH-911' }), // same limit tag as row 2
        row(17, { site: 'SMP' }),
      ]) +
      '\r\n' +
      Papa.unparse([[...REGISTER_COLUMNS.map((c) => row(18)[c.key] ?? ''), 'a stray cell']])
    const res = await upload(eng, text, { siteId: fhr }).expect(201)
    const byRow = (n: number) =>
      res.body.errors.filter((e: { row: number }) => e.row === n).map((e: { field: string }) => e.field)
    expect(byRow(2)).toEqual([])
    expect(byRow(3)).toEqual(['setpoint'])
    expect(byRow(4)).toEqual(['area'])
    expect(byRow(5)).toEqual(['setpoint', 'deadband'])
    expect(byRow(6).sort()).toEqual(['setpoint', 'signal', 'sil'])
    expect(byRow(7)).toEqual(['tag'])
    expect(byRow(8)).toEqual(['site'])
    expect(byRow(9)).toEqual(['_row'])
    const message = (n: number, field: string) =>
      res.body.errors.find((e: { row: number; field: string }) => e.row === n && e.field === field).message
    expect(message(3, 'setpoint')).toMatch(/not a number/)
    expect(message(4, 'area')).toMatch(/Loading Bay.*does not exist/)
    expect(message(5, 'setpoint')).toMatch(/Operating window: .*must be above normal high 650/)
    expect(message(6, 'setpoint')).toMatch(/decimal separator/)
    expect(message(7, 'tag')).toMatch(/already on row 2/)
    expect(message(8, 'site')).toMatch(/for site SMP; this import is for FHR/)
    expect(res.body.rows.map((r: { row: number; action: string }) => [r.row, r.action])).toEqual([[2, 'create']])
  })

  it('refuses users who may not import (approver, operator) with 403 and stores nothing', async () => {
    const batches = await countRows(ctx.db, 'import_batch')
    for (const who of ['approver', 'operator', 'auditor']) {
      const a = await signedIn(app, who)
      const res = await upload(a, csv([row(21)]), { siteId: fhr }).expect(403)
      expect(res.body.error.code).toBe('FORBIDDEN')
    }
    expect(await countRows(ctx.db, 'import_batch')).toBe(batches)
  })

  it('refuses a file that is neither CSV nor XLSX, judged by its content and not its name', async () => {
    const batches = async () => countRows(ctx.db, 'import_batch')
    const before = await batches()
    const png = Buffer.concat([Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]), Buffer.alloc(64, 7)])
    const a = await upload(eng, png, { siteId: fhr, fileName: 'register.csv' }).expect(400)
    expect(a.body.error.message).toMatch(/neither an XLSX workbook nor CSV text in UTF-8/)
    const zip = Buffer.concat([Buffer.from('PK\x03\x04', 'latin1'), Buffer.alloc(200, 1)])
    const b = await upload(eng, zip, { siteId: fhr, fileName: 'register.xlsx' }).expect(400)
    expect(b.body.error.message).toMatch(/XLSX workbook/)
    const latin1 = Buffer.from(csv([row(31)]), 'latin1') // '°C' in Latin-1 is not UTF-8
    const c = await upload(eng, latin1, { siteId: fhr }).expect(400)
    expect(c.body.error.message).toMatch(/UTF-8/)
    const d = await upload(eng, '', { siteId: fhr }).expect(400)
    expect(d.body.error.message).toMatch(/empty/)
    const e = await upload(eng, REGISTER_COLUMNS.map((col) => col.header).join(','), { siteId: fhr }).expect(400)
    expect(e.body.error.message).toMatch(/no data rows/)
    expect(await batches()).toBe(before)
  })

  it('refuses a file over 5 MB with 413 and a request without a file with 400', async () => {
    const big = Buffer.alloc(5 * 1024 * 1024 + 1, 0x61)
    const res = await upload(eng, big, { siteId: fhr }).expect(413)
    expect(res.body.error.message).toMatch(/larger than 5 MB/)
    const none = await eng.upload('/api/imports', { siteId: fhr }).expect(400)
    expect(none.body.error.details.fields.file[0]).toMatch(/Attach the register file/)
  })

  it('uses a mapping sent with the file, remembers it for that user only, and lists the file headers when a column is missing', async () => {
    const headers = { area: 'Plant unit', process: 'Equipment', instrumentTag: 'Loop', tag: 'Function tag' } as const
    const rename = (h: string) =>
      Object.entries(headers).find(([k]) => REGISTER_COLUMNS.find((c) => c.key === k)?.header === h)?.[1] ?? h
    const text = csv([row(41)]).replace(/^[^\r\n]*/, (line) => line.split(',').map(rename).join(','))
    const missing = await upload(eng, text, { siteId: fhr }).expect(400)
    expect(missing.body.error.details.missing.sort()).toEqual(['area', 'instrumentTag', 'process', 'tag'])
    expect(missing.body.error.details.headers).toContain('Function tag')

    const mapping = { 'Plant unit': 'area', Equipment: 'process', Loop: 'instrumentTag', 'Function tag': 'tag' }
    const mapped = await upload(eng, text, { siteId: fhr, mapping }).expect(201)
    expect(mapped.body.errors).toEqual([])
    expect(mapped.body.rows).toEqual([expect.objectContaining({ row: 2, tag: 'TSHH-941', action: 'create' })])

    const remembered = await upload(eng, text, { siteId: fhr }).expect(201)
    expect(remembered.body.errors).toEqual([])
    expect(remembered.body.mapping).toMatchObject(mapping)
    expect((await eng.get('/api/imports/mapping').expect(200)).body.mapping).toMatchObject(mapping)

    // another safety engineer has no remembered mapping
    const admin = await signedIn(app, 'admin')
    const { agent: other } = await newAccount(app, admin, {
      email: 'second-engineer@fernhollow.example',
      displayName: 'Second Engineer',
      password: 'a-long-enough-password',
      roles: [{ siteId: fhr, role: 'safety_engineer' }],
    })
    const res = await upload(other, text, { siteId: fhr }).expect(400)
    expect(res.body.error.details.missing).toHaveLength(4)
  })
})

describe('POST /api/imports/:id/commit', () => {
  it('writes nothing when one row of the file is bad: the commit answers 422 with the errors', async () => {
    const text = csv([row(51), row(52, { process: 'Import test heater H-52' }), row(53, { rangeHigh: '-5' }), row(54)])
    const dry = await upload(eng, text, { siteId: fhr }).expect(201)
    expect(dry.body.errors.map((e: { row: number; field: string }) => [e.row, e.field])).toEqual([[4, 'rangeHigh']])
    const before = await registerCounts()
    const res = await commit(eng, dry.body.id).expect(422)
    expect(res.body.error.details.errors).toEqual(dry.body.errors)
    expect(await registerCounts()).toEqual(before)
    const tags = await ctx.db
      .selectFrom('limit_function')
      .select('tag')
      .where('tag', 'in', ['TSHH-951', 'TSHH-952', 'TSHH-954'])
      .execute()
    expect(tags).toEqual([])
    expect(
      await ctx.db.selectFrom('process').select('id').where('name', '=', 'Import test heater H-52').execute(),
    ).toEqual([])
    expect(
      (await ctx.db.selectFrom('import_batch').select('status').where('id', '=', dry.body.id).executeTakeFirstOrThrow())
        .status,
    ).toBe('checked')
  })

  it('writes the rows as proposed limits with one batch event and one event per row that carry the same batch id', async () => {
    const file = await readFile(new URL('../../docs/examples/register-import-example.csv', import.meta.url))
    const dry = await upload(eng, file, { siteId: fhr, fileName: 'register-import-example.csv' }).expect(201)
    expect(dry.body.errors).toEqual([])
    const auditBefore = await auditCount()
    const res = await commit(eng, dry.body.id).expect(200)
    expect(res.body.status).toBe('committed')
    expect(res.body.summary.create).toBe(dry.body.rowCount)
    expect(res.body.limitIds).toHaveLength(dry.body.rowCount)

    const batchEvents = await ctx.db
      .selectFrom('audit_event')
      .selectAll()
      .where('action', '=', 'import.commit')
      .where('entity_id', '=', String(dry.body.id))
      .execute()
    expect(batchEvents).toHaveLength(1)
    const [event] = batchEvents
    expect(event.entity_type).toBe('ImportBatch')
    expect(event.after).toEqual({
      rowCount: dry.body.rowCount,
      checksum: createHash('sha256').update(file).digest('hex'),
      fileName: 'register-import-example.csv',
    })
    expect(event.batch_id).toMatch(/^[0-9a-f-]{36}$/)

    const inBatch = await ctx.db
      .selectFrom('audit_event')
      .select(['action', 'entity_id'])
      .where('batch_id', '=', event.batch_id)
      .execute()
    // every event the commit wrote carries the batch id: the batch event plus one per written row and instrument/process
    expect(inBatch).toHaveLength((await auditCount()) - auditBefore)
    const limitEvents = inBatch.filter((e) => e.action === 'limit.create')
    expect(limitEvents.map((e) => Number(e.entity_id)).sort((x, y) => x - y)).toEqual(
      [...res.body.limitIds].sort((x: number, y: number) => x - y),
    )
    expect(new Set(inBatch.map((e) => e.action))).toEqual(
      new Set([
        'import.commit',
        'limit.create',
        'instrument.create',
        'change_request.create',
        ...(inBatch.some((e) => e.action === 'process.create') ? ['process.create'] : []),
      ]),
    )
    expect(inBatch.filter((e) => e.action === 'instrument.create')).toHaveLength(9)

    const sif = (await eng.get('/api/limits?q=pshh-2010').expect(200)).body.items[0]
    expect(sif).toMatchObject({ status: 'proposed', sil: 2, limitClass: 'trip' })
    expect(sif.instrumentIds).toHaveLength(2)
    expect(sif.subsystems.map((s: { role: string }) => s.role)).toEqual(['sensor', 'logic', 'final_element'])
    const slop = await ctx.db.selectFrom('process').select('name').where('name', '=', 'Slop tank TK-305').execute()
    expect(slop).toHaveLength(1)

    const again = await commit(eng, dry.body.id).expect(409)
    expect(again.body.error.code).toBe('INVALID_STATE')
  })

  it('commits at once with dryRun=false, and refuses with 422 (nothing written) when the file has errors', async () => {
    const bad = await upload(eng, csv([row(61), row(62, { direction: 'sideways' })]), {
      siteId: fhr,
      dryRun: false,
    }).expect(422)
    expect(bad.body.error.details.errors).toEqual([expect.objectContaining({ row: 3, field: 'direction' })])
    expect(await ctx.db.selectFrom('limit_function').select('id').where('tag', '=', 'TSHH-961').execute()).toEqual([])
    const ok = await upload(eng, csv([row(61)]), { siteId: fhr, dryRun: false }).expect(201)
    expect(ok.body.status).toBe('committed')
    expect(ok.body.limitIds).toHaveLength(1)
  })

  it('updates a proposed limit, refuses a change to an active limit or to an instrument behind one, and reads XLSX', async () => {
    await upload(eng, csv([row(71), row(72, { process: 'Import test heater H-72' })]), {
      siteId: fhr,
      dryRun: false,
    }).expect(201)
    const [active] = await ctx.db.selectFrom('limit_function').select('id').where('tag', '=', 'TSHH-972').execute()
    const owner = new pg.Client({ connectionString: ctx.database.ownerUrl })
    await owner.connect()
    await owner.query('UPDATE limit_function SET status = $1 WHERE id = $2', ['active', active.id])
    await owner.end()

    const wb = new ExcelJS.Workbook()
    const ws = wb.addWorksheet('Register')
    ws.addRow(REGISTER_COLUMNS.map((c) => c.header))
    const cells = (r: Cells) =>
      REGISTER_COLUMNS.map((c) => {
        const v = r[c.key] ?? ''
        return /^-?\d+(\.\d+)?$/.test(v) ? Number(v) : v // numbers as numeric cells, as a spreadsheet keeps them
      })
    ws.addRow(cells(row(71, { setpoint: '790.5' })))
    ws.addRow(
      cells(
        row(73, {
          process: 'Import test heater H-72',
          instrumentTag: 'TT-972',
          rangeHigh: '1300',
          tag: 'TAH-973',
          limitClass: 'alarm',
          setpoint: '700',
          latching: 'no',
          resetRole: '',
          responseTimeMin: '10',
          severity: 'major',
        }),
      ),
    )
    ws.addRow(cells(row(72, { process: 'Import test heater H-72', setpoint: '800' })))
    const xlsx = Buffer.from((await wb.xlsx.writeBuffer()) as ArrayBuffer)
    const res = await upload(eng, xlsx, { siteId: fhr, fileName: 'changes.csv' }).expect(201)
    expect(res.body.rows).toEqual([
      expect.objectContaining({ row: 2, tag: 'TSHH-971', action: 'update', changes: ['setpoint'] }),
    ])
    const errors = res.body.errors.map((e: { row: number; field: string; message: string }) => [
      e.row,
      e.field,
      /change request/.test(e.message),
    ])
    expect(errors).toEqual([
      [3, 'rangeHigh', true],
      [4, 'setpoint', true],
    ])
  })
})

describe('round trip: export the register, import the same file', () => {
  for (const format of ['csv', 'xlsx'] as const) {
    it(`${format}: every row is unchanged, the commit writes no event and changes nothing`, async () => {
      await upload(
        eng,
        csv([
          row(80 + (format === 'csv' ? 1 : 2), {
            process: 'Round trip heater H-8',
            compensatingMeasures: 'Watch TI-9; Reduce firing',
            description: 'Line one, "quoted"',
            consequence: `=cmd|' /C calc'!A0`,
            operatorResponse: '@SUM(1+1)*cmd|',
            rangeLow: '-50',
          }),
        ]),
        { siteId: fhr, dryRun: false },
      ).expect(201)
      const file = await download(eng, `/api/limits/export?format=${format}&siteId=${fhr}`)
      if (format === 'csv') {
        // OWASP "CSV Injection": a text cell starting with = + - @ tab or CR leaves with a quote before it, a
        // negative number stays a number
        const [header, ...records] = Papa.parse<string[]>(file.toString('utf8').replace(/^\uFEFF/, ''), {
          skipEmptyLines: true,
        }).data
        const col = (key: string) => header.indexOf(REGISTER_COLUMNS.find((c) => c.key === key)!.header)
        const mine = records.find((r) => r[col('tag')] === 'TSHH-981')!
        expect(mine[col('consequence')]).toBe(`'=cmd|' /C calc'!A0`)
        expect(mine[col('operatorResponse')]).toBe(`'@SUM(1+1)*cmd|`)
        expect(mine[col('rangeLow')]).toBe('-50')
        expect(records.every((r) => r.every((cell) => !/^[=+@\t\r]/.test(cell) && !/^-(?!\d)/.test(cell)))).toBe(true)
      }
      const total = (await eng.get(`/api/limits?siteId=${fhr}&pageSize=1`).expect(200)).body.total
      const before = await registerCounts()
      const dry = await upload(eng, file, { siteId: fhr, fileName: `register.${format}` }).expect(201)
      expect(dry.body.errors).toEqual([])
      expect(dry.body.ignoredColumns).toEqual([])
      expect(dry.body.rowCount).toBe(total)
      expect(dry.body.summary).toEqual({ create: 0, update: 0, unchanged: total })
      const res = await commit(eng, dry.body.id).expect(200)
      expect(res.body.status).toBe('unchanged')
      expect(res.body.limitIds).toEqual([])
      expect(await registerCounts()).toEqual(before)
      expect(
        await ctx.db
          .selectFrom('audit_event')
          .select('id')
          .where('action', '=', 'import.commit')
          .where('entity_id', '=', String(dry.body.id))
          .execute(),
      ).toEqual([])
      // the other site's rows are not this import's
      if (format === 'csv') {
        const both = await download(eng, '/api/limits/export?format=csv')
        const other = await upload(eng, both, { siteId: smp }).expect(201)
        const rowsWith = (f?: string) =>
          new Set(
            other.body.errors.filter((e: { field: string }) => !f || e.field === f).map((e: { row: number }) => e.row),
          )
        expect(rowsWith().size).toBeGreaterThan(0)
        expect(rowsWith('site')).toEqual(rowsWith())
      }
    })
  }
})

describe('the alarm rationalization record in the register file', () => {
  it('imports and exports the alarm type, causes, confirmation, consequence category and safety-related claim', async () => {
    const alarm = row(71, {
      process: 'Rationalization heater H-7',
      tag: 'TAH-971',
      limitClass: 'alarm',
      setpoint: '700',
      latching: 'no',
      resetRole: '',
      severity: 'moderate',
      responseTimeMin: '15',
      operatorResponse: 'Reduce the firing rate',
      alarmType: 'rate of change',
      causes: 'Fuel gas valve sticking open; burner fouling',
      confirmation: 'Compare with TI-971B and the flue gas temperature',
      impactCategory: 'asset or production',
      safetyRelatedAlarm: 'yes',
      claimedRiskReduction: '10',
    })
    const res = await upload(eng, csv([alarm]), { siteId: fhr, dryRun: false }).expect(201)
    expect(res.body.status).toBe('committed')
    const limit = (await eng.get(`/api/limits/${res.body.limitIds[0]}`).expect(200)).body
    expect(limit).toMatchObject({
      limitClass: 'alarm',
      alarmType: 'rate_of_change',
      causes: 'Fuel gas valve sticking open; burner fouling',
      confirmation: 'Compare with TI-971B and the flue gas temperature',
      impactCategory: 'asset_production',
      safetyRelatedAlarm: true,
      claimedRiskReduction: 10,
    })

    // a claim above 10 for an alarm is refused cell by cell (ISA-18.2 / IEC 61511: an alarm layer claims at most 10)
    const over = await upload(eng, csv([row(72, { ...alarm, tag: 'TAH-972', claimedRiskReduction: '100' })]), {
      siteId: fhr,
    }).expect(201)
    expect(over.body.errors).toEqual([expect.objectContaining({ field: 'claimedRiskReduction' })])

    const file = await download(eng, `/api/limits/export?format=csv&siteId=${fhr}`)
    const [header, ...records] = Papa.parse<string[]>(file.toString('utf8').replace(/^\uFEFF/, ''), {
      skipEmptyLines: true,
    }).data
    const col = (key: string) => header.indexOf(REGISTER_COLUMNS.find((c) => c.key === key)!.header)
    const mine = records.find((r) => r[col('tag')] === 'TAH-971')!
    expect({
      alarmType: mine[col('alarmType')],
      causes: mine[col('causes')],
      confirmation: mine[col('confirmation')],
      impactCategory: mine[col('impactCategory')],
      safetyRelatedAlarm: mine[col('safetyRelatedAlarm')],
      claimedRiskReduction: mine[col('claimedRiskReduction')],
    }).toEqual({
      alarmType: 'rate_of_change',
      causes: 'Fuel gas valve sticking open; burner fouling',
      confirmation: 'Compare with TI-971B and the flue gas temperature',
      impactCategory: 'asset_production',
      safetyRelatedAlarm: 'yes',
      claimedRiskReduction: '10',
    })
  })
})

describe('an import opens a draft change request for its baseline', () => {
  it('holds one create item per imported draft; approving and implementing it in bulk activates them', async () => {
    const app = createApp(ctx)
    const { eng, approver, approver2, tech } = await signedInAs(app, CHANGE_PEOPLE)
    const fhr = await siteIdByCode(eng, 'FHR')
    // two rows of the example file under new tags, so they are new drafts in this database
    const parsed = Papa.parse<string[]>(
      readFileSync('docs/examples/register-import-example.csv', 'utf8').replace(/^\uFEFF/, ''),
      { skipEmptyLines: true },
    )
    const [header, ...rows] = parsed.data
    const tagCol = header.indexOf('Limit tag')
    const instCol = header.indexOf('Instrument tag')
    const fresh = rows
      .filter(
        (r) =>
          header[header.indexOf('Other voted instrument tags')] && !r[header.indexOf('Other voted instrument tags')],
      )
      .slice(0, 2)
      .map((r, i) => r.map((v, j) => (j === tagCol ? `BASE-${i}-${v}` : j === instCol ? `BASE-${i}-${v}` : v)))
    const file = Buffer.from(Papa.unparse([header, ...fresh]), 'utf8')
    const dry = await upload(eng, file, { siteId: fhr, fileName: 'register-import-example.csv' }).expect(201)
    const committed = (await eng.post(`/api/imports/${dry.body.id}/commit`).expect(200)).body
    expect(committed.changeRequestId).toEqual(expect.any(Number))
    const cr = (await eng.get(`/api/change-requests/${committed.changeRequestId}`).expect(200)).body
    expect(cr.status).toBe('draft')
    expect(cr.items.length).toBeGreaterThan(0)
    expect(cr.items.every((i: { kind: string }) => i.kind === 'create')).toBe(true)
    await readyToImplement(eng, cr.id)
    await eng.post(`/api/change-requests/${cr.id}/submission`).expect(200)
    await approver.post(`/api/change-requests/${cr.id}/approvals`, { password: 'limitkeeper-demo' }).expect(200)
    if (cr.approvalsRequired > 1)
      await approver2.post(`/api/change-requests/${cr.id}/approvals`, { password: 'limitkeeper-demo' }).expect(200)
    await tech
      .post(`/api/change-requests/${cr.id}/implementations`, {
        allItems: true,
        deviceListConfirmed: true,
        password: 'limitkeeper-demo',
      })
      .expect(200)
    for (const item of cr.items.slice(0, 3))
      expect((await eng.get(`/api/limits/${item.limitId}`).expect(200)).body.status).toBe('active')
  })
})

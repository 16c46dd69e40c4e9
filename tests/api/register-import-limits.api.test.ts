// A register upload with far more rows than one import takes is refused while it is read (docs/security.md,
// "Uploads"): 400 naming the limit, nothing stored, for XLSX and CSV.
import ExcelJS from 'exceljs'
import { beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { IMPORT_MAX_ROWS } from '../../shared/schemas/imports.ts'
import { signedIn, type ApiAgent, siteIdByCode } from './helpers/agent.ts'
import { useTestDb } from './helpers/test-db.ts'

const ctx = useTestDb()
let eng: ApiAgent
let siteId: number
const ROWS = 10_000

async function batches() {
  const { rows } = await ctx.pool.query<{ n: string }>('SELECT count(*) AS n FROM import_batch')
  return Number(rows[0].n)
}

beforeAll(async () => {
  const app = createApp(ctx, { serveClient: false })
  eng = await signedIn(app, 'engineer')
  siteId = await siteIdByCode(eng, 'FHR')
})

describe('register import row limit', () => {
  it(`refuses an XLSX of ${ROWS} rows with 400 and stores nothing`, async () => {
    const wb = new ExcelJS.Workbook()
    const ws = wb.addWorksheet('Register')
    ws.addRow(['Tag', 'Setpoint'])
    for (let i = 1; i <= ROWS; i++) ws.addRow([`TSHH-${i}`, i])
    const file = Buffer.from(await wb.xlsx.writeBuffer())
    const before = await batches()
    const res = await eng.upload('/api/imports', { siteId }, { name: 'register.xlsx', content: file })
    expect(res.status).toBe(400)
    expect(res.body.error.message).toContain(`more than ${IMPORT_MAX_ROWS} data rows`)
    expect(await batches()).toBe(before)
  })

  it(`refuses a CSV of ${ROWS} rows with 400 and stores nothing`, async () => {
    const text = ['Tag,Setpoint', ...Array.from({ length: ROWS }, (_, i) => `TSHH-${i},${i}`)].join('\n')
    const before = await batches()
    const res = await eng.upload('/api/imports', { siteId }, { name: 'register.csv', content: text })
    expect(res.status).toBe(400)
    expect(res.body.error.message).toContain(`more than ${IMPORT_MAX_ROWS} data rows`)
    expect(await batches()).toBe(before)
  })
})

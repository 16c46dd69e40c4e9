// The register file's row limit applied while reading (docs/security.md, "Uploads"): the readers stop at the first
// non-empty data row past the limit, for CSV and for XLSX (ExcelJS's streaming reader), and still read a file at the
// limit whole. Files are built here with ExcelJS's writer; no value below is computed by the reader under test.
import ExcelJS from 'exceljs'
import { describe, expect, it } from 'vitest'
import { readTable } from '../../../server/features/register/imports.service.ts'

async function xlsx(rows: number, opts: { blankEvery?: number } = {}): Promise<Buffer> {
  const wb = new ExcelJS.Workbook()
  const ws = wb.addWorksheet('Register')
  ws.addRow(['Tag', 'Setpoint'])
  for (let i = 1; i <= rows; i++) {
    if (opts.blankEvery && i % opts.blankEvery === 0) ws.addRow([])
    ws.addRow([`TSHH-${i}`, i])
  }
  return Buffer.from(await wb.xlsx.writeBuffer())
}

const csv = (rows: number, blankLines = 0) =>
  Buffer.from(
    [
      'Tag,Setpoint',
      ...Array.from({ length: rows }, (_, i) => `TSHH-${i + 1},${i + 1}`),
      ...Array(blankLines).fill(''),
    ].join('\n'),
  )

describe('register file row limit while reading', () => {
  it('reads an XLSX at the limit whole: headers, every row with its spreadsheet row number and cells', async () => {
    const t = await readTable(await xlsx(50), { maxRows: 50 })
    expect(t.headers).toEqual(['Tag', 'Setpoint'])
    expect(t.rows).toHaveLength(50)
    expect(t.rows[0]).toEqual({ row: 2, values: ['TSHH-1', '1'] })
    expect(t.rows[49]).toEqual({ row: 51, values: ['TSHH-50', '50'] })
  })

  it('refuses an XLSX with one data row more than the limit (400, the limit named)', async () => {
    await expect(readTable(await xlsx(51), { maxRows: 50 })).rejects.toMatchObject({
      status: 400,
      message: expect.stringContaining('more than 50 data rows'),
    })
  })

  it('counts only non-empty rows of an XLSX against the limit', async () => {
    const t = await readTable(await xlsx(50, { blankEvery: 10 }), { maxRows: 50 })
    expect(t.rows).toHaveLength(50)
  })

  it('reads a CSV at the limit (blank lines at the end do not count) and refuses one row more', async () => {
    const t = await readTable(csv(50, 3), { maxRows: 50 })
    expect(t.rows.filter((r) => r.values.some((v) => v !== ''))).toHaveLength(50)
    expect(t.rows[0]).toEqual({ row: 2, values: ['TSHH-1', '1'] })
    await expect(readTable(csv(51), { maxRows: 50 })).rejects.toMatchObject({ status: 400 })
  })

  it('refuses a 5 MB-class CSV of far more rows than the limit', async () => {
    await expect(readTable(csv(200_000), { maxRows: 2000 })).rejects.toMatchObject({
      status: 400,
      message: expect.stringContaining('more than 2000 data rows'),
    })
  })
})

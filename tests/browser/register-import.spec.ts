import { readFileSync } from 'node:fs'
import { describe, expect, it } from 'vitest'
import { choose, signInAs, useBrowserApp } from './helpers.ts'

const app = useBrowserApp()

/** The cells of one CSV line (a quoted cell may hold commas and doubled quotes). */
function cellsOf(line: string): string[] {
  const cells: string[] = []
  let cell = ''
  let quoted = false
  for (let i = 0; i < line.length; i++) {
    const ch = line[i]
    if (quoted) {
      if (ch === '"' && line[i + 1] === '"') {
        cell += '"'
        i++
      } else if (ch === '"') quoted = false
      else cell += ch
    } else if (ch === '"') quoted = true
    else if (ch === ',') {
      cells.push(cell)
      cell = ''
    } else cell += ch
  }
  cells.push(cell)
  return cells
}
const csvCell = (c: string) => (/[",\n]/.test(c) ? `"${c.replaceAll('"', '""')}"` : c)

/** The example file's header and first two rows (an alarm and a trip on one thermocouple), their tags given a prefix. */
function smallRegisterFile(prefix: string) {
  const [head, ...lines] = readFileSync('docs/examples/register-import-example.csv', 'utf8')
    .replace(/^\uFEFF/, '')
    .split(/\r?\n/)
  const header = cellsOf(head)
  const instrumentCol = header.indexOf('Instrument tag')
  const tagCol = header.indexOf('Limit tag')
  const rows = lines
    .slice(0, 2)
    .map(cellsOf)
    .map((c) => {
      c[instrumentCol] = `${prefix}${c[instrumentCol]}`
      c[tagCol] = `${prefix}${c[tagCol]}`
      return c
    })
  const csv = `${[header, ...rows].map((r) => r.map(csvCell).join(',')).join('\n')}\n`
  return { csv, tags: rows.map((r) => r[tagCol]) }
}

describe('the register import', () => {
  it('uploads a CSV, shows the dry run, commits it and opens the draft change request holding the rows', async () => {
    const page = await app.browser.newPage({ viewport: { width: 1440, height: 1000 } })
    await signInAs(page, app.baseUrl, 'engineer')
    const prefix = `BI${Date.now().toString(36).toUpperCase()}-`
    const { csv, tags } = smallRegisterFile(prefix)
    expect(tags).toEqual([`${prefix}TAH-1011`, `${prefix}TSHH-1011`])

    // 1. from the register to the import, site and file
    await page.goto(`${app.baseUrl}/register`)
    await page.locator('[data-test="import-register"]').click()
    await page.waitForURL(`${app.baseUrl}/register/import`)
    await page.locator('[data-test="import-file-step"]').waitFor()
    expect(await page.locator('[data-test="import-example"]').textContent()).toContain(
      'docs/examples/register-import-example.csv',
    )
    await choose(page, 'import-site', 'FHR')
    await page
      .locator('[data-test="import-file"] input[type="file"]')
      .setInputFiles({ name: 'heater-h101.csv', mimeType: 'text/csv', buffer: Buffer.from(csv, 'utf8') })
    const upload = page.locator('[data-test="import-upload"]')
    await expect.poll(() => upload.isEnabled()).toBe(true)
    await upload.click()

    // 2. the columns: the register file's own headers are all matched
    await page.locator('[data-test="import-mapping-step"]').waitFor()
    expect(await page.locator('[data-test="mapping-missing"]').count()).toBe(0)
    expect(await page.locator('[data-test="mapping-row-19"] [data-test="mapping-header"]').textContent()).toBe(
      'Limit tag',
    )
    expect(await page.locator('[data-test="mapping-source-19"]').textContent()).toBe('Same name as the register field')
    await page.locator('[data-test="mapping-continue"]').click()

    // 3. the dry run: two new limits, no problems
    await page.locator('[data-test="import-check-step"]').waitFor()
    expect(await page.locator('[data-test="summary-create"]').textContent()).toContain('2 new')
    expect(await page.locator('[data-test="summary-errors"]').textContent()).toContain('0 problems')
    for (const tag of tags) await page.locator(`[data-test="import-row-${tag}"]`).waitFor()
    expect(await page.locator('[data-test="import-errors"]').count()).toBe(0)
    const commit = page.locator('[data-test="import-commit"]')
    expect(await commit.isEnabled()).toBe(true)
    await commit.click()

    // 4. committed: a link to the draft change request, the rows proposed until it is implemented
    await page.locator('[data-test="import-done-step"]').waitFor()
    expect(await page.locator('[data-test="import-proposed-note"]').textContent()).toContain('stay proposed')
    await page.locator('[data-test="import-change-request"]').click()
    await page.waitForURL(/\/changes\/\d+$/)
    await page.locator('[data-test="cr-title"]', { hasText: 'heater-h101.csv' }).waitFor()
    expect(await page.locator('[data-test="cr-status"]').textContent()).toContain('Draft')
    const items = page.locator('[data-test^="change-item-"]')
    await expect.poll(() => items.count()).toBe(2)
    expect(
      (await items.locator('[data-test="item-target-link"]').allTextContents()).map((t) => t.trim()).sort(),
    ).toEqual([...tags].sort())
    await page.close()
  })
})

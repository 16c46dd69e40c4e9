import { readFileSync } from 'node:fs'
import { describe, expect, it } from 'vitest'
import { choose, signInAs, useBrowserApp } from './helpers.ts'

// The history import screen (docs/trip-tests.md#history-import) with the demo register: the shipped example file
// through the dry run and the commit, then the imported tests marked on the limit's page.

const app = useBrowserApp({ register: true })

describe('the history import', () => {
  it('checks the example file, imports it and marks the imported tests on the limit page', async () => {
    const page = await app.browser.newPage({ viewport: { width: 1366, height: 900 } })
    await signInAs(page, app.baseUrl, 'engineer')
    await page.goto(`${app.baseUrl}/register/import`)
    await page.locator('[data-test="to-history-import"]').click()
    await page.waitForURL(`${app.baseUrl}/register/import-history`)
    await page.locator('[data-test="import-file-step"]').waitFor()
    await choose(page, 'import-site', 'FHR')
    await page.locator('[data-test="import-file"] input[type="file"]').setInputFiles({
      name: 'history-import-example.csv',
      mimeType: 'text/csv',
      buffer: readFileSync('docs/examples/history-import-example.csv'),
    })
    const upload = page.locator('[data-test="import-upload"]')
    await expect.poll(() => upload.isEnabled()).toBe(true)
    await upload.click()

    // the file's headers are the history file's own: all matched
    await page.locator('[data-test="import-mapping-step"]').waitFor()
    expect(await page.locator('[data-test="mapping-missing"]').count()).toBe(0)
    expect(await page.locator('[data-test="mapping-source-1"]').textContent()).toBe('Same name as the history field')
    await page.locator('[data-test="mapping-continue"]').click()

    // the dry run: four tests, one commissioning date, one bypass, no problems
    await page.locator('[data-test="import-check-step"]').waitFor()
    expect(await page.locator('[data-test="summary-tests"]').textContent()).toContain('4 tests')
    expect(await page.locator('[data-test="summary-bypasses"]').textContent()).toContain('1 bypass')
    expect(await page.locator('[data-test="summary-errors"]').textContent()).toContain('0 problems')
    const commit = page.locator('[data-test="import-commit"]')
    expect((await commit.textContent())?.trim()).toBe('Import 6 records')
    await commit.click()
    await page.locator('[data-test="import-done-step"]').waitFor()
    expect(await page.locator('[data-test="import-done-title"]').textContent()).toContain(
      'history-import-example.csv imported',
    )

    // the limit page lists the two imported tests of PSLL-104, marked, with their tester
    const found = await page.request.get(`${app.baseUrl}/api/limits?q=PSLL-104`)
    const limit = ((await found.json()) as { items: { id: number; tag: string }[] }).items.find(
      (l) => l.tag === 'PSLL-104',
    )!
    await page.goto(`${app.baseUrl}/register/limits/${limit.id}`)
    const marks = page.locator('[data-test^="limit-test-imported-"]')
    await expect.poll(() => marks.count()).toBe(2)
    expect(await page.locator('[data-test="limit-trip-test-list"]').textContent()).toContain('by Corra Bellweather')
    await page.close()
  })
})

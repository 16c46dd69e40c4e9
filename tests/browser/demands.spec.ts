import { describe, expect, it } from 'vitest'
import { pageFor, useBrowserApp } from './helpers.ts'

// The demand list in the browser (docs/demands.md#screens): a shift supervisor opens the list, records a
// real demand on the demo register's TSHH-101 through the record dialog, and finds it in the list.

const app = useBrowserApp({ register: true })

describe('demands and trips in the browser', () => {
  it('opens the list, records a real demand through the dialog and lists it', async () => {
    const page = await pageFor(app, 'supervisor')
    const errors: string[] = []
    page.on('pageerror', (e) => errors.push(e.message))

    await page.goto(`${app.baseUrl}/demands`)
    await page.locator('[data-test="demand-table"]').waitFor()
    await page.locator('[data-test="demand-new"]').click()
    await page.locator('[data-test="demand-record-dialog"]').waitFor()

    // the limit picker searches active limits by tag
    await page.locator('[data-test="demand-limit"] input').fill('TSHH-101')
    const option = page.locator('.v-overlay--active .v-list-item', { hasText: 'TSHH-101' }).first()
    await option.waitFor()
    await option.click()
    await page.locator('[data-test="demand-outcome-acted"] input').check()
    await page.locator('[data-test="demand-description"] textarea').first().fill('Feed surge reached the trip')
    await page.locator('[data-test="demand-save"]').click()
    // the new record opens on its own page
    await page.waitForURL(/\/demands\/\d+$/)
    await expect
      .poll(() => page.locator('[data-test="demand-description-text"]').textContent())
      .toContain('Feed surge reached the trip')
    expect(await page.locator('[data-test="demand-title"]').textContent()).toContain('TSHH-101')

    // and in the list
    await page.goto(`${app.baseUrl}/demands`)
    const table = page.locator('[data-test="demand-table"]')
    await expect.poll(() => table.textContent()).toContain('Feed surge reached the trip')
    const row = table.locator('tr', { hasText: 'Feed surge reached the trip' })
    expect(await row.textContent()).toContain('TSHH-101')
    expect(await row.textContent()).toContain('Real demand')
    expect(errors).toEqual([])
  })
})

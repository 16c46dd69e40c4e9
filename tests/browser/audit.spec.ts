import { describe, expect, it } from 'vitest'
import { signInAs, useBrowserApp } from './helpers.ts'

// the demo register writes "Limit created" events with a link to each limit
const app = useBrowserApp({ register: true })

describe('the audit trail screen', () => {
  it("shows readable actions, the record's tag with a link, times in the reader's zone; filters kept in the URL", async () => {
    // India Standard Time is UTC+05:30 all year (IANA time zone database: no daylight saving)
    const context = await app.browser.newContext({ timezoneId: 'Asia/Kolkata' })
    const page = await context.newPage()
    await signInAs(page, app.baseUrl, 'auditor')
    await page.goto(`${app.baseUrl}/audit?action=limit.create`)
    const row = page.locator('[data-test="audit-table"] tbody tr').first()
    await row.locator('[data-test="audit-action-label"]').waitFor()
    expect(await row.locator('[data-test="audit-action-label"]').textContent()).toContain('Limit created')

    const when = row.locator('td').first().locator('span')
    const iso = (await when.getAttribute('title'))!
    const local = new Date(new Date(iso).getTime() + 5.5 * 3_600_000)
    const hhmm = `${String(local.getUTCHours()).padStart(2, '0')}:${String(local.getUTCMinutes()).padStart(2, '0')}`
    expect(await when.textContent()).toContain(hhmm)
    expect(await when.textContent()).toContain('GMT+5:30')

    // a date filter goes into the URL and survives a reload
    await page.locator('[data-test="audit-from"] input').fill('2020-01-01')
    await expect.poll(() => new URL(page.url()).searchParams.get('from')).toBe('2020-01-01')
    await page.reload()
    await page.locator('[data-test="audit-action-label"]').first().waitFor()
    expect(await page.locator('[data-test="audit-from"] input').inputValue()).toBe('2020-01-01')
    expect(new URL(page.url()).searchParams.get('action')).toBe('limit.create')

    const link = page.locator('[data-test="audit-entity-link"]').first()
    const tag = (await link.textContent())!.trim()
    await link.click()
    await page.waitForURL(/\/register\/limits\/\d+$/)
    await expect.poll(() => page.locator('h1').first().textContent()).toContain(tag)
    await context.close()
  })

  it('runs the verifier for an auditor and shows the chain intact', async () => {
    const page = await app.browser.newPage()
    await signInAs(page, app.baseUrl, 'auditor')
    await page.goto(`${app.baseUrl}/audit`)
    await page.locator('[data-test="audit-verify"]').click()
    const verdict = page.locator('[data-test="audit-verdict"]')
    await verdict.waitFor()
    expect(await verdict.textContent()).toContain('The chain is intact')
    await page.close()
  })
})

import { describe, expect, it } from 'vitest'
import { callApi, pageFor, useBrowserApp } from './helpers.ts'

const app = useBrowserApp({ register: true })

describe('alarm journal to figures to a bad actor’s replay', () => {
  it('uploads a journal, sees the figures and opens a bad actor’s limit and its replay', async () => {
    const page = await pageFor(app, 'engineer')
    const sites = await callApi<{ items: { id: number }[] }>(page, app.baseUrl, 'GET', '/sites')
    const siteId = sites.items[0].id
    const limits = await callApi<{ items: { id: number; tag: string }[] }>(
      page,
      app.baseUrl,
      'GET',
      `/limits?siteId=${siteId}&pageSize=5`,
    )
    const tag = limits.items[0].tag
    // 12 activations and returns of one register alarm over the last two days, written in UTC
    const now = Date.now()
    const rows = ['Time;Tag;Event;Priority']
    for (let i = 0; i < 12; i++) {
      const t = (ms: number) => new Date(ms).toISOString().slice(0, 19).replace('T', ' ')
      rows.push(`${t(now - 2 * 86_400_000 + i * 3_600_000)};${tag};ACTIVE;low`)
      rows.push(`${t(now - 2 * 86_400_000 + i * 3_600_000 + 60_000)};${tag};RTN;low`)
    }
    await page.goto(`${app.baseUrl}/alarms/journals`)
    await page.locator('[data-test="journal-time-zone"] input').fill('UTC')
    await page
      .locator('[data-test="journal-file"] input[type="file"]')
      .setInputFiles({ name: 'journal.csv', mimeType: 'text/csv', buffer: Buffer.from(rows.join('\n'), 'utf8') })
    await page.locator('[data-test="journal-upload"]').click()
    await expect
      .poll(() => page.locator('[data-test="journal-counts"]').textContent(), { timeout: 15_000 })
      .toContain('stored 24')

    await page.getByRole('link', { name: 'See the figures' }).click()
    await expect
      .poll(() => page.locator('[data-test="figures-summary"]').textContent(), { timeout: 15_000 })
      .toContain('12 alarms annunciated')
    await page.locator('[data-test="chart-pareto"]').waitFor()
    await page.locator(`[data-test="bad-actor-${tag}"]`).click()
    await expect.poll(() => page.locator('[data-test="limit-tag"]').textContent()).toBe(tag)
    await page.locator('[data-test="limit-replay"]').click()
    await expect.poll(() => page.locator('[data-test="replay-limit"]').textContent()).toContain(tag)
    await page.context().close()
  })
})

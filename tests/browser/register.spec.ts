import type { Page } from 'playwright-core'
import { describe, expect, it } from 'vitest'
import { thermocoupleK } from '../api/helpers/factories.ts'
import { signInAs, useBrowserApp } from './helpers.ts'

const app = useBrowserApp()

/** Calls the API from the signed-in page (its session cookie and CSRF token). */
async function apiFrom(page: Page) {
  const base = `${app.baseUrl}/api`
  const { csrfToken } = (await (await page.request.get(`${base}/session`)).json()) as { csrfToken: string }
  return {
    async get<T>(url: string): Promise<T> {
      const res = await page.request.get(`${base}${url}`)
      expect(res.status(), `GET ${url}`).toBe(200)
      return res.json() as Promise<T>
    },
    async post<T>(url: string, data: unknown): Promise<T> {
      const res = await page.request.post(`${base}${url}`, { data, headers: { 'X-CSRF-Token': csrfToken } })
      expect(res.status(), `POST ${url}: ${await res.text()}`).toBe(201)
      return res.json() as Promise<T>
    },
  }
}

/** A heater with one thermocouple and two drafts on it: an alarm and a trip (the trip raises window warnings). */
async function createFixture(page: Page) {
  const api = await apiFrom(page)
  const sites = await api.get<{ items: { id: number; code: string }[] }>('/sites')
  const fhr = sites.items.find((s) => s.code === 'FHR')!
  const areas = await api.get<{ items: { id: number; siteId: number }[] }>('/areas')
  const area = areas.items.find((a) => a.siteId === fhr.id)!
  const process = await api.post<{ id: number }>('/processes', {
    areaId: area.id,
    name: 'Browser test heater BT-1',
    description: 'Fired heater used by the register journey',
  })
  const instrument = await api.post<{ id: number }>(
    '/instruments',
    thermocoupleK(process.id, 'BT-TT-901', {
      rangeHigh: 600,
      normalLow: 320,
      normalHigh: 370,
      designLow: null,
      designHigh: 450,
      burnout: 'downscale',
      deviceDescription: 'Limit controller, channel 1',
    }),
  )
  const common = {
    processId: process.id,
    instrumentIds: [instrument.id],
    direction: 'high',
    deadband: 5,
    testIntervalMonths: 12,
  }
  await api.post('/limits', {
    ...common,
    tag: 'BT-TAH-901',
    description: 'Browser test outlet temperature high alarm',
    limitClass: 'alarm',
    setpoint: 390,
    responseTimeMin: 10,
    severity: 'major',
  })
  const trip = await api.post<{ id: number }>('/limits', {
    ...common,
    tag: 'BT-TSH-901',
    description: 'Browser test outlet temperature high trip',
    limitClass: 'trip',
    setpoint: 420,
    onDelaySec: 2,
    severity: 'severe',
    analyticalLimit: 440,
  })
  return { tripId: trip.id }
}

/** Picks an entry of a Vuetify select by its visible text and closes the menu. */
async function choose(page: Page, field: string, option: string) {
  await page.locator(`[data-test="${field}"]`).click()
  const item = page.locator('.v-overlay--active .v-list-item', { hasText: option }).first()
  await item.waitFor()
  await item.click()
  await page.keyboard.press('Escape')
  await page.locator('.v-overlay--active .v-list-item').first().waitFor({ state: 'detached' })
}

describe('the register', () => {
  it('filters by class and text, keeps the filters in the URL, and opens a limit with its operating-window chart', async () => {
    const page = await app.browser.newPage({ viewport: { width: 1440, height: 1000 } })
    await signInAs(page, app.baseUrl, 'engineer')
    const { tripId } = await createFixture(page)

    await page.goto(`${app.baseUrl}/register`)
    await page.locator('[data-test="register-table"]').waitFor()
    await choose(page, 'filter-class', 'Trip')
    await page.locator('[data-test="filter-search"] input').fill('BT-T')
    await expect.poll(() => new URL(page.url()).searchParams.get('q')).toBe('BT-T')
    expect(new URL(page.url()).searchParams.getAll('limitClass')).toEqual(['trip'])

    const tripRow = page.locator('[data-test="row-BT-TSH-901"]')
    await tripRow.waitFor()
    await expect.poll(() => page.locator('[data-test="row-BT-TAH-901"]').count()).toBe(0)
    expect(await tripRow.locator('[data-test="window-findings"]').textContent()).toContain('2')

    // A reload restores the filters from the URL.
    await page.reload()
    await tripRow.waitFor()
    expect(await page.locator('[data-test="filter-search"] input').inputValue()).toBe('BT-T')
    expect(await page.locator('[data-test="row-BT-TAH-901"]').count()).toBe(0)

    await tripRow.locator('[data-test="row-link"]').click()
    await page.waitForURL(`${app.baseUrl}/register/limits/${tripId}`)
    await page.locator('[data-test="limit-tag"]', { hasText: 'BT-TSH-901' }).waitFor()
    await page.locator('[data-test="window-chart"] canvas, [data-test="window-chart"] svg').first().waitFor()
    const warnings = page.locator('[data-test="window-warning"]')
    await expect.poll(() => warnings.count()).toBe(2)
    expect(await warnings.allTextContents()).toEqual(
      expect.arrayContaining([
        expect.stringContaining('delays are meant for alarms'),
        expect.stringContaining('burns out downscale'),
      ]),
    )
    expect(await page.locator('[data-test="safety-notice"]').count()).toBe(1)
    expect(await page.locator('[data-test="edit-limit"]').count()).toBe(1)
    await page.close()
  })

  it("shows the server's field messages when an edited draft leaves its operating window", async () => {
    const page = await app.browser.newPage({ viewport: { width: 1440, height: 1000 } })
    await signInAs(page, app.baseUrl, 'engineer')
    const api = await apiFrom(page)
    const found = await api.get<{ items: { id: number }[] }>('/limits?q=BT-TSH-901')
    const id = found.items[0].id

    await page.goto(`${app.baseUrl}/register/limits/${id}/edit`)
    const setpoint = page.locator('[data-test="field-setpoint"] input')
    await expect.poll(() => setpoint.inputValue()).toBe('420')
    await page.locator('[data-test="window-preview"] [data-test="window-chart"] canvas').waitFor()
    // Below the alarm at 390: the live check and then the server refuse it.
    await setpoint.fill('380')
    await page.locator('[data-test="window-preview"] [data-test="window-error"]').first().waitFor()
    await page.locator('[data-test="save-limit"]').click()
    await expect
      .poll(() => page.locator('[data-test="field-setpoint"]').textContent())
      .toContain('must be above high alarm BT-TAH-901')
    await page.locator('[data-test="server-window-findings"]').waitFor()
    expect(page.url()).toBe(`${app.baseUrl}/register/limits/${id}/edit`)
    await page.close()
  })
})

import { existsSync } from 'node:fs'
import type { Browser, Page } from 'playwright-core'
import { afterAll, beforeAll, expect } from 'vitest'
import { loadConfig } from '../../server/config.ts'
import { createDb } from '../../server/db/index.ts'
import { startServer, type RunningServer } from '../../server/index.ts'
import { AdjustableClock } from '../../server/clock.ts'
import { seedDemo } from '../../server/seed/demo.ts'
import { launchChromium } from './chromium.ts'
import { IMPACT_CHECKLIST } from '../../shared/schemas/change-requests.ts'
import { createTestDatabase } from '../api/helpers/test-db.ts'

export { launchChromium } from './chromium.ts'

export interface BrowserContext {
  server: RunningServer
  browser: Browser
  clock: AdjustableClock
  baseUrl: string
  ownerUrl: string
}

/** Per test file: own database with the demo plant, the built app served on a free port, and Chromium. */
export function useBrowserApp(
  opts: { seed?: (ownerUrl: string) => Promise<void>; register?: boolean } = {},
): BrowserContext {
  const ctx = {} as BrowserContext
  let drop = async () => {}
  beforeAll(async () => {
    if (!existsSync('dist/index.html')) throw new Error('Build the client first (npm run build); npm test does it')
    const database = await createTestDatabase()
    drop = database.drop
    const clock = new AdjustableClock()
    const owner = createDb(database.ownerUrl, 2).db
    await seedDemo(owner, clock, { register: opts.register ?? false })
    await owner.destroy()
    if (opts.seed) await opts.seed(database.ownerUrl)
    const config = loadConfig({ NODE_ENV: 'test', DATABASE_URL: database.appUrl, PORT: '0', SMTP_PORT: '1' })
    ctx.clock = clock
    ctx.ownerUrl = database.ownerUrl
    ctx.server = await startServer(config, { clock, runJobs: false })
    ctx.baseUrl = ctx.server.url
    ctx.browser = await launchChromium()
  })
  afterAll(async () => {
    await ctx.browser?.close()
    await ctx.server?.close()
    await drop()
  })
  return ctx
}

/** Signs in through the sign-in page and waits for the home page. */
export async function signInAs(page: Page, baseUrl: string, who: string) {
  await page.goto(`${baseUrl}/sign-in`)
  const email = page.getByLabel('E-mail address')
  const password = page.getByLabel('Password')
  await page.locator('[data-test="sign-in"]').waitFor()
  // the e-mail field takes the focus when the form mounts (autofocus): wait for it, or typing can land in the wrong field
  await expect.poll(() => page.evaluate(() => document.activeElement?.getAttribute('name'))).toBe('email')
  await email.fill(`${who}@fernhollow.example`)
  await password.fill('limitkeeper-demo')
  // the form must show what was typed before it is sent
  await expect.poll(() => email.inputValue()).toBe(`${who}@fernhollow.example`)
  await expect.poll(() => password.inputValue()).toBe('limitkeeper-demo')
  await page.locator('[data-test="sign-in"]').click()
  await page.locator('[data-test="user-name"]').waitFor()
}

/** Calls the API from a signed-in page, with the session's cookie and CSRF token (what the app itself does). */
export async function callApi<T = any>(
  page: Page,
  baseUrl: string,
  method: string,
  path: string,
  body?: unknown,
): Promise<T> {
  const session = (await (await page.request.get(`${baseUrl}/api/session`)).json()) as { csrfToken: string }
  const res = await page.request.fetch(`${baseUrl}/api${path}`, {
    method,
    data: body,
    headers: { 'X-CSRF-Token': session.csrfToken },
  })
  const json = await res.json().catch(() => undefined)
  if (!res.ok()) throw new Error(`${method} ${path} answered ${res.status()}: ${JSON.stringify(json)}`)
  return json as T
}

/** A signed-in page in a browser context of its own (no cookies shared between users). */
export async function pageFor(app: BrowserContext, who: string): Promise<Page> {
  const context = await app.browser.newContext({ viewport: { width: 1440, height: 1000 } })
  const page = await context.newPage()
  page.setDefaultTimeout(15_000)
  await signInAs(page, app.baseUrl, who)
  return page
}

/**
 * Ticks a change request's before-implementation checklist from a safety engineer's page (implementation needs it:
 * OSHA 1910.119(l)(3)-(4) and (i)).
 */
export async function readyToImplement(page: Page, baseUrl: string, changeRequestId: number) {
  for (const c of IMPACT_CHECKLIST.filter((x) => x.group === 'before'))
    await callApi(page, baseUrl, 'PUT', `/change-requests/${changeRequestId}/checklist/${c.item}`, { done: true })
}

/** Picks an entry of a Vuetify select by its visible text and waits for its menu to close. */
export async function choose(page: Page, field: string, option: string) {
  await page.locator(`[data-test="${field}"]`).click()
  const item = page.locator('.v-overlay--active .v-list-item', { hasText: option }).first()
  await item.waitFor()
  // a click while the menu still grows in can land before Vuetify listens to the list: wait for its transition to end
  await page
    .locator('.v-overlay--active .v-overlay__content')
    .first()
    .evaluate(async (el) => {
      await Promise.all(el.getAnimations({ subtree: true }).map((a) => a.finished.catch(() => null)))
    })
  await item.click()
  await page.locator('.v-overlay--active .v-list-item').first().waitFor({ state: 'detached' })
}

/** The text of the first element with this `data-test`, spaces collapsed; null when it is not on the page within 1 s. */
export function testText(page: Page, test: string): Promise<string | null> {
  return page
    .locator(`[data-test="${test}"]`)
    .first()
    .textContent({ timeout: 1_000 })
    .then((t) => t?.replace(/\s+/g, ' ').trim() ?? null)
    .catch(() => null)
}

/**
 * Fills the text field or text area with this `data-test` with `value` (Playwright's fill: the value replaced at
 * once). A Vuetify text area holds a hidden second one for its height: the first is the one shown.
 */
export function fillIn(page: Page, test: string, value: string) {
  return page.locator(`[data-test="${test}"] :is(input, textarea)`).first().fill(value)
}

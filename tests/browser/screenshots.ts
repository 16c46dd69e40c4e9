// npm run docs:screenshots — screenshots of the main screens for docs/screenshots/, made against a throwaway cluster
// with the demo plant. Not part of npm test. The register, the limit page, the trip-test form and the shift handover
// are taken at three widths (desktop 1366 × 900, tablet 1024 × 768, phone 390 × 844). Names given after `--` take
// only the screenshots whose names start with one of them: `npm run docs:screenshots -- register trip-test-form`.
import { mkdir } from 'node:fs/promises'
import path from 'node:path'
import type { Browser, Page } from 'playwright-core'
import { loadConfig } from '../../server/config.ts'
import { createDb } from '../../server/db/index.ts'
import { migrateToLatest } from '../../server/db/migrate.ts'
import { startServer } from '../../server/index.ts'
import { systemClock } from '../../server/clock.ts'
import { seedDemoActivity } from '../../server/seed/demo-activity.ts'
import { seedDemo } from '../../server/seed/demo.ts'
import { launchChromium } from './chromium.ts'
import { startThrowawayCluster } from '../pg-cluster.ts'

const OUT = 'docs/screenshots'

async function signIn(
  browser: Browser,
  baseUrl: string,
  who: string,
  viewport = { width: 1440, height: 900 },
): Promise<Page> {
  const page = await browser.newPage({ viewport })
  await page.goto(`${baseUrl}/sign-in`)
  // the e-mail field takes the focus when the form mounts (autofocus): wait for it before typing
  await page.waitForFunction(() => document.activeElement?.getAttribute('name') === 'email')
  await page.getByLabel('E-mail address').fill(`${who}@fernhollow.example`)
  await page.getByLabel('Password').fill('limitkeeper-demo')
  await page.locator('[data-test="sign-in"]').click()
  // attached, not visible: on a phone the name sits in the collapsed navigation
  await page.locator('[data-test="user-name"]').waitFor({ state: 'attached' })
  return page
}

const only = process.argv.slice(2)
const wanted = (name: string) => !only.length || only.some((o) => name.startsWith(o))

/** The widths every main screen is checked at. */
const WIDTHS = [
  { suffix: '1366', viewport: { width: 1366, height: 900 } },
  { suffix: '1024', viewport: { width: 1024, height: 768 } },
  { suffix: '390', viewport: { width: 390, height: 844 } },
] as const

async function shot(page: Page, url: string, name: string, waitFor?: string, scrollTo?: string) {
  if (!wanted(name)) return
  await page.goto(url)
  if (waitFor)
    await page
      .locator(waitFor)
      .first()
      .waitFor({ timeout: 15_000 })
      .catch(() => console.warn(`  ${name}: ${waitFor} did not appear`))
  await page.waitForLoadState('networkidle')
  if (scrollTo) await page.locator(scrollTo).first().scrollIntoViewIfNeeded()
  // the pointer rests on the app bar: at the top left it would open the navigation rail on hover
  await page.mouse.move((page.viewportSize()?.width ?? 800) / 2, 24)
  await page.waitForTimeout(600) // let ripples and chart animations settle for a clean picture
  await page.screenshot({ path: path.join(OUT, `${name}.png`) })
  console.log(`  ${OUT}/${name}.png`)
}

const cluster = await startThrowawayCluster('limitkeeper-shots-')
let stop = async () => {}
try {
  await migrateToLatest(cluster.ownerUrl)
  const owner = createDb(cluster.ownerUrl, 2).db
  const config = loadConfig({
    ...process.env,
    NODE_ENV: 'development',
    DATABASE_URL: cluster.appUrl,
    PORT: '0',
    SMTP_PORT: '1',
  })
  await seedDemo(owner)
  await seedDemoActivity(owner, config, systemClock)
  await owner.destroy()
  const server = await startServer(config, { runJobs: false })
  const browser = await launchChromium()
  stop = async () => {
    await browser.close()
    await server.close()
  }
  await mkdir(OUT, { recursive: true })
  const base = server.url
  console.log('Screenshots:')
  await shot(await browser.newPage(), `${base}/sign-in`, 'sign-in', '[data-test="sign-in"]')
  const eng = await signIn(browser, base, 'engineer')
  await shot(eng, `${base}/`, 'home-engineer')
  await shot(eng, `${base}/register`, 'register', '[data-test="register-table"]')
  const first = await eng.request.get(`${base}/api/limits?sort=tag&pageSize=50&hasWarnings=true`)
  const limit = ((await first.json()) as { items: { id: number }[] }).items[0]
  if (limit) await shot(eng, `${base}/register/limits/${limit.id}`, 'limit-detail', '[data-test="window-chart"]')
  await shot(eng, `${base}/changes`, 'changes')
  const tech = await signIn(browser, base, 'technician', { width: 1024, height: 768 })
  await shot(tech, `${base}/tests`, 'trip-test-schedule-tablet')
  const mgr = await signIn(browser, base, 'manager')
  await shot(mgr, `${base}/bypasses/review`, 'bypass-review')
  await shot(mgr, `${base}/bypasses/risk`, 'risk-erosion')
  const auditor = await signIn(browser, base, 'auditor')
  await shot(auditor, `${base}/audit`, 'audit-trail', '[data-test="audit-table"]')
  const admin = await signIn(browser, base, 'admin')
  await shot(admin, `${base}/admin/users`, 'admin-users')

  // the main screens at three widths
  const tc = await eng.request.get(`${base}/api/limits?q=TSHH-103&pageSize=5`)
  const tested = ((await tc.json()) as { items: { id: number; tag: string }[] }).items.find((l) => l.tag === 'TSHH-103')
  for (const { suffix, viewport } of WIDTHS) {
    const engineer = await signIn(browser, base, 'engineer', viewport)
    await shot(engineer, `${base}/register`, `register-${suffix}`, '[data-test="register-table"]')
    if (limit)
      await shot(
        engineer,
        `${base}/register/limits/${limit.id}`,
        `limit-page-${suffix}`,
        '[data-test="window-chart"]',
        '[data-test="window-chart"]',
      )
    await engineer.close()
    const technician = await signIn(browser, base, 'technician', viewport)
    if (tested) {
      const form = `${base}/tests/new?limitId=${tested.id}`
      await shot(technician, form, `trip-test-form-${suffix}`, '[data-test="section-precautions"]')
      await shot(
        technician,
        form,
        `trip-test-form-precautions-${suffix}`,
        '[data-test="section-precautions"]',
        '[data-test="precaution-hazardous"]',
      )
    }
    await technician.close()
    const supervisor = await signIn(browser, base, 'supervisor', viewport)
    await shot(supervisor, `${base}/shift-handover`, `handover-${suffix}`)
    await supervisor.close()
  }
} finally {
  await stop()
  await cluster.stop()
}

// throwaway: sign in as each role, open routes, log page errors, screenshot some pages
import { launchChromium } from './tests/browser/chromium.ts'
const base = process.env.BASE ?? 'http://127.0.0.1:8090'
const plan: Record<string, string[]> = JSON.parse(process.argv[2])
const shots: string[] = JSON.parse(process.argv[3] ?? '[]')
const browser = await launchChromium()
for (const [who, urls] of Object.entries(plan)) {
  for (const [w, h] of [[1366, 900], [390, 844]]) {
    const ctx = await browser.newContext({ viewport: { width: w, height: h } })
    const page = await ctx.newPage()
    const errors: string[] = []
    page.on('pageerror', (e) => errors.push(String(e)))
    page.on('console', (m) => { if (m.type() === 'error') errors.push(m.text()) })
    await page.goto(`${base}/sign-in`)
    await page.getByLabel('E-mail address').fill(`${who}@fernhollow.example`)
    await page.getByLabel('Password').fill('limitkeeper-demo')
    await page.locator('[data-test="sign-in"]').click()
    await page.locator('[data-test="user-name"]').waitFor({ state: 'attached', timeout: 20000 })
    for (const u of urls) {
      await page.goto(base + u)
      await page.waitForLoadState('networkidle')
      const name = `${who}${u.replace(/[/?=&]/g, '_')}-${w}`
      if (shots.some((s) => u.startsWith(s))) await page.screenshot({ path: `/tmp/shots/${name}.png`, fullPage: false })
      console.log(who, w, u, errors.length ? 'ERRORS: ' + errors.join(' | ').slice(0, 300) : 'ok')
      errors.length = 0
    }
    await ctx.close()
  }
}
await browser.close()

import { describe, expect, it } from 'vitest'
import { signInAs, useBrowserApp } from './helpers.ts'

const app = useBrowserApp()

describe('navigation by role', () => {
  it('shows the admin sections to an administrator', async () => {
    const page = await app.browser.newPage()
    await signInAs(page, app.baseUrl, 'admin')
    const nav = page.locator('[data-test="nav"]')
    await expect.poll(() => nav.locator('[data-test="nav-users"]').count()).toBe(1)
    expect(await nav.locator('[data-test="nav-mail"]').count()).toBe(1)
    expect(await nav.locator('[data-test="nav-audit"]').count()).toBe(1)
    expect(await page.locator('[data-test="user-name"]').textContent()).toContain('Ada Brightwater')
    await page.close()
  })

  it('hides admin and audit sections from an operator, and guards the route', async () => {
    const page = await app.browser.newPage()
    await signInAs(page, app.baseUrl, 'operator')
    const nav = page.locator('[data-test="nav"]')
    await nav.locator('[data-test="nav-home"]').waitFor()
    expect(await nav.locator('[data-test="nav-users"]').count()).toBe(0)
    expect(await nav.locator('[data-test="nav-audit"]').count()).toBe(0)
    expect(await nav.locator('[data-test="nav-mail"]').count()).toBe(0)
    await page.goto(`${app.baseUrl}/admin/users`)
    await page.waitForURL(`${app.baseUrl}/`)
    // the home page's site cards come from the API: wait for them rather than count at once
    await page.locator('[data-test="site-card-FHR"]').waitFor()
    expect(await page.locator('[data-test="site-card-SMP"]').count()).toBe(0)
    await page.close()
  })

  it('shows a readable message for a wrong password', async () => {
    const page = await app.browser.newPage()
    await page.goto(`${app.baseUrl}/sign-in`)
    // the e-mail field takes the focus when the form mounts (autofocus): wait for it before typing
    await expect.poll(() => page.evaluate(() => document.activeElement?.getAttribute('name'))).toBe('email')
    await page.getByLabel('E-mail address').fill('auditor@fernhollow.example')
    await page.getByLabel('Password').fill('not-the-password')
    await page.locator('[data-test="sign-in"]').click()
    await expect
      .poll(() => page.locator('[data-test="sign-in-error"]').textContent())
      .toContain('E-mail address or password is wrong')
    await page.close()
  })
})

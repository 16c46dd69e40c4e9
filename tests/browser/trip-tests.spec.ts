import { readFile } from 'node:fs/promises'
import type { Browser, Page } from 'playwright-core'
import { describe, expect, it } from 'vitest'
import { choose, readyToImplement, useBrowserApp } from './helpers.ts'

const app = useBrowserApp()
const PW = 'limitkeeper-demo'
const TABLET = { width: 1024, height: 768 }

/**
 * Signs in through the sign-in page. The form can be rendered again just after it appears (its e-mail field then
 * takes the focus back), so the typed values are checked before submitting and the whole step is retried if the
 * sign-in did not take.
 */
async function signIn(page: Page, who: string) {
  const email = page.getByLabel('E-mail address')
  const password = page.getByLabel('Password')
  for (let attempt = 1; ; attempt++) {
    await page.goto(`${app.baseUrl}/sign-in`)
    await expect
      .poll(async () => {
        await email.fill(`${who}@fernhollow.example`)
        await password.fill(PW)
        return [await email.inputValue(), await password.inputValue()]
      })
      .toEqual([`${who}@fernhollow.example`, PW])
    await page.locator('[data-test="sign-in"]').click()
    const outcome = await Promise.race([
      page
        .locator('[data-test="user-name"]')
        .waitFor({ state: 'attached' })
        .then(
          () => 'signed-in',
          () => 'timeout',
        ),
      // the loser of the race ends when its page closes; its failure is not this step's
      page
        .locator('[data-test="sign-in-error"]')
        .waitFor()
        .then(
          () => 'refused',
          () => 'timeout',
        ),
    ])
    if (outcome === 'signed-in') return
    if (attempt === 3 || outcome === 'timeout')
      throw new Error(`sign-in as ${who} failed: ${await page.locator('[data-test="sign-in-error"]').textContent()}`)
  }
}

/** A signed-in page of its own browser context (one per user), with API calls carrying that user's session and CSRF token. */
async function userPage(browser: Browser, who: string) {
  const context = await browser.newContext({ viewport: { width: 1280, height: 900 }, acceptDownloads: true })
  const page = await context.newPage()
  await signIn(page, who)
  const base = `${app.baseUrl}/api`
  const csrf = async () =>
    ((await (await page.request.get(`${base}/session`)).json()) as { csrfToken: string }).csrfToken
  const call = async <T>(
    method: 'GET' | 'POST',
    url: string,
    data?: unknown,
    expected = method === 'POST' ? 201 : 200,
  ): Promise<T> => {
    const res =
      method === 'GET'
        ? await page.request.get(`${base}${url}`)
        : await page.request.post(`${base}${url}`, { data, headers: { 'X-CSRF-Token': await csrf() } })
    expect(res.status(), `${method} ${url}: ${await res.text()}`).toBe(expected)
    return res.json() as Promise<T>
  }
  return {
    page,
    context,
    get: <T>(url: string) => call<T>('GET', url),
    post: <T>(url: string, data: unknown, expected?: number) => call<T>('POST', url, data, expected),
  }
}

/** A type K thermocouple (0–1200 °C) with a latching high trip at 800 °C, put in service through a change request. */
async function activeThermocoupleTrip(browser: Browser) {
  const eng = await userPage(browser, 'engineer')
  const sites = await eng.get<{ items: { id: number; code: string }[] }>('/sites')
  const fhr = sites.items.find((s) => s.code === 'FHR')!
  const areas = await eng.get<{ items: { id: number; siteId: number }[] }>(`/areas?siteId=${fhr.id}`)
  const proc = await eng.post<{ id: number }>('/processes', {
    areaId: areas.items[0].id,
    name: 'Browser test furnace F-7',
    description: 'Annealing furnace',
  })
  const inst = await eng.post<{ id: number }>('/instruments', {
    processId: proc.id,
    tag: 'BT-TT-770',
    measuredVariable: 'temperature',
    unit: '°C',
    rangeLow: 0,
    rangeHigh: 1200,
    normalLow: 600,
    normalHigh: 720,
    designLow: null,
    designHigh: 900,
    burnout: 'upscale',
    signal: { kind: 'thermocouple', tcType: 'K', headTransmitter: false },
    deviceKind: 'limit_controller',
    deviceDescription: 'Furnace zone 1 over-temperature limiter',
  })
  const limit = await eng.post<{ id: number; tag: string }>('/limits', {
    processId: proc.id,
    instrumentIds: [inst.id],
    tag: 'BT-TSHH-770',
    description: 'Furnace zone 1 over-temperature trip',
    direction: 'high',
    limitClass: 'trip',
    setpoint: 800,
    deadband: 10,
    severity: 'severe',
    testIntervalMonths: 12,
    latching: true,
    resetRole: 'operator',
    requiredResponseTimeSec: 5,
    compensatingMeasures: ['Operator watches the zone temperature locally'],
  })
  const cr = await eng.post<{ id: number }>('/change-requests', {
    siteId: fhr.id,
    type: 'permanent',
    title: 'Put BT-TSHH-770 in service',
    items: [{ kind: 'create', limitId: limit.id }],
  })
  await readyToImplement(eng.page, app.baseUrl, cr.id)
  await eng.post(`/change-requests/${cr.id}/submission`, {}, 200)
  const approver = await userPage(browser, 'approver')
  await approver.post(`/change-requests/${cr.id}/approvals`, { password: PW }, 200)
  const tech = await userPage(browser, 'technician')
  await tech.post(
    `/change-requests/${cr.id}/implementations`,
    { allItems: true, deviceListConfirmed: true, password: PW },
    200,
  )
  await eng.context.close()
  await approver.context.close()
  return { limit, tech }
}

const field = (page: Page, test: string) => page.locator(`[data-test="${test}"] input`)

describe('trip tests in the browser', () => {
  it('a technician on a tablet records a thermocouple test with the computed millivolts, signs it and downloads its certificate', async () => {
    app.clock.set('2026-09-14T07:45:00Z')
    const { limit, tech } = await activeThermocoupleTrip(app.browser)
    const page = tech.page
    await page.setViewportSize(TABLET)

    // the schedule lists it as never tested, with a "Record test" action
    await page.goto(`${app.baseUrl}/tests?tab=never_tested`)
    const row = page.locator(`[data-test="schedule-row-${limit.tag}"]`)
    await row.waitFor()
    expect(await row.locator(`[data-test="status-${limit.tag}"]`).textContent()).toContain('Never tested')
    await row.locator(`[data-test="record-${limit.tag}"]`).click()
    await page.waitForURL(`${app.baseUrl}/tests/new?limitId=${limit.id}`)

    await page.locator('[data-test="limit-summary"]').waitFor()
    expect(await page.locator('[data-test="limit-setpoint"]').textContent()).toContain('800 °C')
    // default tolerance ± 0.5 % of the 1200 °C span = ± 6 °C (docs/conventions.md, "Site policies")
    expect(await page.locator('[data-test="limit-tolerance"]').textContent()).toContain('± 6 °C')
    expect(await page.locator('[data-test="safety-notice"]').count()).toBe(1)
    expect(await page.locator('[data-test="test-signal-caution"]').textContent()).toContain("plant's test procedure")

    // the millivolt source value: E(800 °C) − E(25 °C) = 33.2754 − 1.0002 = 32.2752 mV
    // (type K, ITS-90 table values from NIST SRD 60), shown to 0.001 mV
    await page.locator('[data-test="test-signal-waiting"]').waitFor()
    await field(page, 'test-signal-cold-junction').fill('25')
    const value = page.locator('[data-test="test-signal-value"]')
    await expect.poll(() => value.textContent()).toContain('32.275 mV')
    expect(await page.locator('[data-test="test-signal-components"]').textContent()).toContain(
      'E(cold junction) = 1.0002 mV',
    )

    // before the test: the caution that a trip acts on the process, and the precautions recorded with the test
    // (docs/trip-tests.md#precautions)
    expect(await page.locator('[data-test="precautions-caution"]').textContent()).toContain(
      'This test can move the final element or trip the unit',
    )
    await page.locator('[data-test="precaution-isolated-no"]').click()
    await page.locator('[data-test="precaution-not-isolated"]').waitFor()
    await page.locator('[data-test="precaution-isolated-yes"]').click()
    await page.locator('[data-test="precaution-not-isolated"]').waitFor({ state: 'detached' })
    await field(page, 'precaution-permit').fill('PTW-2026-3318')
    await page.locator('[data-test="precaution-control-room"] input').check()
    await page.locator('[data-test="precaution-hazardous-yes"]').click()
    await page.locator('[data-test="precaution-is-calibrator-yes"]').click()
    await page.locator('[data-test="precaution-gas-test-yes"]').click()
    // the methods that drive a real trip say so, and ask that operations expect it
    // (choose waits for the menu to open and close, so the choice is not lost to its animation on a busy machine)
    await choose(page, 'method', 'Setpoint moved across the process value')
    expect(await page.locator('[data-test="real-trip-warning"]').textContent()).toContain('A real trip will happen')
    await choose(page, 'method', 'Signal injection')
    await page.locator('[data-test="real-trip-warning"]').waitFor({ state: 'detached' })

    await field(page, 'performed-at').fill('2026-09-14T09:30')
    await field(page, 'procedure-ref').fill('TP-770-01 rev 2')
    await field(page, 'device-serial').fill('LC-55102')
    await field(page, 'work-order').fill('WO-31877')
    await field(page, 'calibrator-id').fill('CAL-MV-07')
    // a calibrator past due is flagged at once, and saving is held back
    await field(page, 'calibrator-due').fill('2026-09-01')
    await page.locator('[data-test="calibrator-past-due"]').waitFor()
    expect(await page.locator('[data-test="save-test"]').isDisabled()).toBe(true)
    await field(page, 'calibrator-due').fill('2027-03-31')
    await page.locator('[data-test="calibrator-past-due"]').waitFor({ state: 'detached' })

    // as found in signal units: 32.3 mV with the terminals at 25 °C reads about 800.6 °C, inside ± 6 °C
    await page.locator('[data-test="as-found-mode-signal"]').click()
    await field(page, 'as-found-signal').fill('32.3')
    await expect.poll(() => page.locator('[data-test="as-found-converted"]').textContent()).toMatch(/= 800\.\d+ °C/)
    await field(page, 'reset-value').fill('791')
    await field(page, 'response-time').fill('3.5')
    for (const check of ['check-latch', 'check-reset-refused', 'check-reset-accepted', 'check-final-element'])
      await page.locator(`[data-test="${check}-yes"]`).click()
    await expect.poll(() => page.locator('[data-test="preview-verdict"]').textContent()).toContain('Passes')
    expect(await page.locator('[data-test="preview-as-found"]').textContent()).toContain('In tolerance')
    // large touch targets on the tablet
    const save = page.locator('[data-test="save-test"]')
    expect((await save.boundingBox())!.height).toBeGreaterThanOrEqual(48)
    expect((await page.locator('[data-test="check-latch-yes"]').boundingBox())!.height).toBeGreaterThanOrEqual(44)

    await save.click()
    await page.waitForURL(/\/tests\/\d+$/)
    const testId = Number(new URL(page.url()).pathname.split('/').pop())
    await page.locator('[data-test="results-card"]').waitFor()
    expect(await page.locator('[data-test="as-found-result"]').textContent()).toContain('In tolerance')
    expect(await page.locator('[data-test="test-status"]').textContent()).toContain('Not signed yet')
    await page.locator('[data-test="edit-test"]').waitFor()

    // sign as performer: the record locks and the limit gets its due date
    await page.locator('[data-test="sign-performed"]').click()
    await page.locator('[data-test="sign-dialog"]').waitFor()
    await field(page, 'sign-password').fill(PW)
    await page.locator('[data-test="sign-confirm"]').click()
    await expect
      .poll(() => page.locator('[data-test="signer-performed"]').textContent())
      .toContain('Tomas Quillfeather')
    expect(await page.locator('[data-test="test-status"]').textContent()).toContain('Signed')
    expect(await page.locator('[data-test="edit-test"]').count()).toBe(0)
    expect(await page.locator('[data-test="precautions"]').textContent()).toContain('Permit to work PTW-2026-3318')
    // the return to service is its own signature, before operations accept the equipment back
    await page.locator('[data-test="sign-returned_to_service"]').click()
    await page.locator('[data-test="sign-dialog"]').waitFor()
    expect(await page.locator('[data-test="sign-dialog"]').textContent()).toContain('every force, jumper')
    await field(page, 'sign-password').fill(PW)
    await page.locator('[data-test="sign-confirm"]').click()
    await expect
      .poll(() => page.locator('[data-test="signer-returned_to_service"]').textContent())
      .toContain('Tomas Quillfeather')
    const proven = await tech.get<{ testDueDate: string; protectionState: string; lastFullPass: string }>(
      `/limits/${limit.id}`,
    )
    expect(proven).toMatchObject({
      lastFullPass: '2026-09-14',
      testDueDate: '2027-09-14',
      protectionState: 'in_service',
    })

    const [download] = await Promise.all([
      page.waitForEvent('download'),
      page.locator('[data-test="download-certificate"]').click(),
    ])
    expect(download.suggestedFilename()).toBe(`trip-test-${testId}-${limit.tag}.pdf`)
    const pdf = await readFile((await download.path())!)
    expect(pdf.subarray(0, 5).toString('latin1')).toBe('%PDF-')

    // the limit's page shows the next due date and the record
    await page.goto(`${app.baseUrl}/register/limits/${limit.id}`)
    await page.locator(`[data-test="limit-test-${testId}"]`).waitFor()
    expect(await page.locator('[data-test="limit-test-due"]').textContent()).toMatch(/14 Sept? 2027/)
    expect(await page.locator('[data-test="limit-test-status"]').textContent()).toContain('Up to date')

    // portrait tablet: the form falls to one column
    await page.setViewportSize({ width: 768, height: 1024 })
    await page.goto(`${app.baseUrl}/tests/new?limitId=${limit.id}`)
    await page.locator('[data-test="section-how"]').waitFor()
    const a = (await page.locator('[data-test="procedure-ref"]').boundingBox())!
    const b = (await page.locator('[data-test="device-serial"]').boundingBox())!
    expect(Math.abs(a.x - b.x)).toBeLessThan(2)
    expect(b.y).toBeGreaterThan(a.y)
    await tech.context.close()
  })
})

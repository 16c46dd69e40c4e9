import type { Page } from 'playwright-core'
import { describe, expect, it } from 'vitest'
import { IMPACT_CHECKLIST } from '../../shared/schemas/change-requests.ts'
import { heaterThermocouple, heaterTripBody } from '../api/helpers/factories.ts'
import { callApi, fillIn, pageFor, readyToImplement, useBrowserApp } from './helpers.ts'

const app = useBrowserApp()
const call = <T = any>(page: Page, method: string, path: string, body?: unknown) =>
  callApi<T>(page, app.baseUrl, method, path, body)
const PW = 'limitkeeper-demo'
const BEFORE = IMPACT_CHECKLIST.filter((c) => c.group === 'before').map((c) => c.item)
const CLOSEOUT = IMPACT_CHECKLIST.filter((c) => c.group === 'closeout').map((c) => c.item)

/** Ticks checklist items on the request page and waits until each shows who ticked it. */
async function tickChecks(page: Page, items: string[]) {
  for (const item of items) {
    await page.locator(`[data-test="check-box-${item}"] input`).click()
    await expect
      .poll(() => page.locator(`[data-test="check-by-${item}"]`).textContent(), { timeout: 15_000 })
      .toContain('Ticked by Selma Rookwood')
  }
}

/** A process, a type K thermocouple (0–1200 °C, normal 300–650) and a high trip at 780 °C, put in service through a first change. */
async function heaterTripInService(engineer: Page, approver: Page, technician: Page, n = '4101') {
  const site = (await call<{ items: { id: number; code: string }[] }>(engineer, 'GET', '/sites')).items.find(
    (s) => s.code === 'FHR',
  )!
  const area = (await call<{ items: { id: number }[] }>(engineer, 'GET', `/areas?siteId=${site.id}`)).items[0]
  const proc = await call(engineer, 'POST', '/processes', {
    areaId: area.id,
    name: `Heater H-${n}`,
    description: 'fired heater, crude charge',
  })
  const inst = await call(engineer, 'POST', '/instruments', heaterThermocouple(proc.id, `TT-${n}`))
  const limit = await call(engineer, 'POST', '/limits', {
    ...heaterTripBody(proc.id, [inst.id], `TSHH-${n}`),
    compensatingMeasures: ['Operator watches the local indicator every 15 min'],
    maxBypassHours: 8,
    bypassPermitted: true,
  })
  const baseline = await call(engineer, 'POST', '/change-requests', {
    siteId: site.id,
    type: 'permanent',
    title: `Put TSHH-${n} in service`,
    rationale: 'Hazard study action 7',
    items: [{ kind: 'create', limitId: limit.id }],
  })
  await readyToImplement(engineer, app.baseUrl, baseline.id)
  await call(engineer, 'POST', `/change-requests/${baseline.id}/submission`)
  await call(approver, 'POST', `/change-requests/${baseline.id}/approvals`, { password: PW })
  const done = await call(technician, 'POST', `/change-requests/${baseline.id}/implementations`, {
    itemId: baseline.items[0].id,
    password: PW,
    readBack: { setpoint: 780, deadband: 5, deadbandUnit: 'eu', onDelaySec: 0, offDelaySec: 0, latching: true },
  })
  expect(done.status).toBe('implemented')
  expect((await call(engineer, 'GET', `/limits/${limit.id}`)).status).toBe('active')
  return { limitId: limit.id as number, baselineId: baseline.id as number }
}

const text = (page: Page, test: string) =>
  page
    .locator(`[data-test="${test}"]`)
    .first()
    .textContent({ timeout: 1_000 })
    .catch(() => null)
/** Waits for a condition of the page (no fixed sleeps). */
const poll = <T>(fn: () => Promise<T>) => expect.poll(fn, { timeout: 15_000 })

describe('management of change in the browser', () => {
  it('engineer proposes a new setpoint, approver signs, technician implements with read-back, engineer closes; the register shows it', async () => {
    const engineer = await pageFor(app, 'engineer')
    const approver = await pageFor(app, 'approver')
    const technician = await pageFor(app, 'technician')
    const { limitId } = await heaterTripInService(engineer, approver, technician)

    // The engineer proposes 790 °C from the limit and submits.
    await engineer.goto(`${app.baseUrl}/changes/new?limitId=${limitId}`)
    await poll(() => text(engineer, 'item-0-current-setpoint')).toContain('780 °C')
    await fillIn(engineer, 'change-title', 'Raise TSHH-4101 to 790 °C')
    await fillIn(engineer, 'change-rationale', 'New tube metallurgy allows a higher trip; see the hazard review.')
    await fillIn(engineer, 'change-hazard', 'HAZOP-2026-031 action 4')
    await fillIn(engineer, 'change-field-setpoint', '790')
    await engineer.locator('[data-test="change-save-submit"]').click()
    await engineer.waitForURL(/\/changes\/\d+$/)
    const id = Number(new URL(engineer.url()).pathname.split('/').pop())
    await poll(() => text(engineer, 'cr-status')).toBe('Waiting for approval')
    expect(await text(engineer, 'diff-setpoint')).toMatch(/780 °C.*790 °C/)
    expect(await engineer.locator('[data-test="cr-approve"]').count()).toBe(0)

    // The approver sees the counter, opens the request from the list and signs (a wrong password first).
    await approver.goto(`${app.baseUrl}/`)
    await poll(() => text(approver, 'waiting-count')).toBe('1')
    await approver.locator('[data-test="nav-changes"]').click()
    await approver.locator(`[data-test="change-row-${id}"]`).click()
    await approver.waitForURL(`${app.baseUrl}/changes/${id}`)
    await approver.locator('[data-test="safety-notice"]').waitFor()
    await approver.locator('[data-test="cr-approve"]').click()
    const dialog = approver.locator('[data-test="sign-dialog"]')
    await dialog.waitFor()
    expect(await text(approver, 'sign-meaning')).toContain('By signing you approve')
    await fillIn(approver, 'sign-password', 'not-my-password')
    await approver.locator('[data-test="sign-confirm"]').click()
    await poll(() => text(approver, 'sign-error')).toContain('password is wrong')
    expect(await dialog.isVisible()).toBe(true)
    await fillIn(approver, 'sign-password', PW)
    await approver.locator('[data-test="sign-confirm"]').click()
    await dialog.waitFor({ state: 'hidden' })
    await poll(() => text(approver, 'cr-status')).toBe('Approved')
    await poll(() => approver.locator('[data-test="waiting-count"]').count()).toBe(0)

    // Before implementation the engineer completes the first group of the checklist (procedures, alarm response,
    // training, pre-start-up safety review): OSHA 1910.119(l)(3)-(4) and (i).
    await engineer.reload()
    await poll(() => text(engineer, 'cr-status')).toBe('Approved')
    await tickChecks(engineer, BEFORE)

    // Blind read-back: the technician enters what the device holds without the approved value on screen; the
    // comparison reveals it, a different value blocks the signature, and reading back again clears the entry.
    await technician.goto(`${app.baseUrl}/changes/${id}`)
    await technician.locator('[data-test="item-implement-0"]').click()
    await technician.locator('[data-test="read-back-caution"]').waitFor()
    expect(await technician.locator('[data-test="read-back-fields"]').textContent()).not.toContain('790')
    expect(await technician.locator('[data-test="read-back-approved"]').count()).toBe(0)
    await fillIn(technician, 'read-back-input-setpoint', '789.5')
    await fillIn(technician, 'sign-password', PW)
    expect(await technician.locator('[data-test="sign-confirm"]').isDisabled()).toBe(true)
    await technician.locator('[data-test="read-back-compare"]').click()
    const result = technician.locator('[data-test="read-back-result-setpoint"]')
    await result.waitFor()
    expect(await result.getAttribute('data-equal')).toBe('false')
    expect(await text(technician, 'read-back-entered')).toBe('789.5 °C')
    expect(await text(technician, 'read-back-approved')).toBe('790 °C')
    await technician.locator('[data-test="read-back-different"]').waitFor()
    expect(await technician.locator('[data-test="read-back-input-setpoint"]').count()).toBe(0)
    expect(await technician.locator('[data-test="sign-confirm"]').isDisabled()).toBe(true)
    await technician.locator('[data-test="read-back-again"]').click()
    await technician.locator('[data-test="read-back-input-setpoint"] input').waitFor()
    expect(await technician.locator('[data-test="read-back-input-setpoint"] input').inputValue()).toBe('')
    expect(await technician.locator('[data-test="read-back-approved"]').count()).toBe(0)
    await fillIn(technician, 'read-back-input-setpoint', '790.00')
    await technician.locator('[data-test="read-back-compare"]').click()
    await technician.locator('[data-test="read-back-equal"]').waitFor()
    expect(await result.getAttribute('data-equal')).toBe('true')
    await fillIn(technician, 'sign-password', PW)
    await technician.locator('[data-test="sign-confirm"]').click()
    await technician.locator('[data-test="sign-dialog"]').waitFor({ state: 'hidden' })
    await poll(() => text(technician, 'cr-status')).toBe('Implemented')

    // The engineer completes the close-out group of the checklist and closes the request.
    await engineer.reload()
    await poll(() => text(engineer, 'cr-status')).toBe('Implemented')
    expect(await engineer.locator('[data-test^="check-box-"] input').count()).toBe(IMPACT_CHECKLIST.length)
    // A close-out item that does not apply is marked so, with its reason (the function is not SIL-rated).
    await poll(() => text(engineer, 'checklist-open-before')).toBe('Complete')
    await poll(() => text(engineer, 'checklist-open-closeout')).toBe(`${CLOSEOUT.length} open`)
    await engineer.locator('[data-test="check-na-safety_requirements"]').click()
    await engineer.locator('[data-test="check-na-confirm"]').click()
    await poll(() => text(engineer, 'check-na-dialog')).toContain('Say why the item does not apply')
    await fillIn(engineer, 'check-na-reason', 'Not a SIL-rated function')
    await engineer.locator('[data-test="check-na-confirm"]').click()
    await poll(() => text(engineer, 'check-by-safety_requirements')).toContain(
      'Not applicable: Not a SIL-rated function · marked by Selma Rookwood',
    )
    await tickChecks(
      engineer,
      CLOSEOUT.filter((c) => c !== 'safety_requirements'),
    )
    await poll(() => text(engineer, 'checklist-open-closeout')).toBe('Complete')
    await engineer.locator('[data-test="cr-close"]').click()
    await fillIn(engineer, 'pssr-reference', 'PSSR-2026-114')
    await fillIn(engineer, 'pssr-findings', 'Trip tested at 790 °C; no findings.')
    await engineer.locator('[data-test="pssr-ready"] input').check()
    await fillIn(engineer, 'sign-password', PW)
    await engineer.locator('[data-test="sign-confirm"]').click()
    await engineer.locator('[data-test="sign-dialog"]').waitFor({ state: 'hidden' })
    await poll(() => text(engineer, 'cr-status')).toBe('Closed')
    const meanings = await engineer
      .locator('[data-test^="signature-"]')
      .evaluateAll((rows) => rows.map((r) => r.getAttribute('data-test')))
    expect(meanings).toEqual(
      expect.arrayContaining(['signature-approved', 'signature-implemented', 'signature-closed']),
    )
    expect(await engineer.locator('[data-test="signature-mismatch"]').count()).toBe(0)

    // The register holds the new setpoint.
    const limit = await call(engineer, 'GET', `/limits/${limitId}`)
    expect(limit.setpoint).toBe(790)
    expect(limit.status).toBe('active')

    for (const p of [engineer, approver, technician]) await p.context().close()
  })

  it("the limit page shows the limit's change requests and proposes a change with the limit filled in", async () => {
    const engineer = await pageFor(app, 'engineer')
    const approver = await pageFor(app, 'approver')
    const technician = await pageFor(app, 'technician')
    const { limitId, baselineId } = await heaterTripInService(engineer, approver, technician, '4102')

    await engineer.goto(`${app.baseUrl}/register/limits/${limitId}`)
    await engineer.locator(`[data-test="limit-change-row-${baselineId}"]`).waitFor()
    expect(await text(engineer, 'limit-changes-count')).toBe('1 on record')
    expect(await text(engineer, `limit-change-row-${baselineId}`)).toContain('Put TSHH-4102 in service')

    // the test-signal card names its figures and lists each point once
    await fillIn(engineer, 'test-signal-cold-junction', '25')
    await engineer.locator('[data-test="test-signal-compute"]').click()
    await engineer.locator('[data-test="test-signal-components"]').waitFor()
    const card = (await text(engineer, 'test-signal')) ?? ''
    expect(card).toContain('Emf at the setpoint')
    expect(card).toContain('Cold-junction temperature')
    expect(card).not.toMatch(/setpointC|emfSetpointMv|coldJunctionC|fractionOfSpan/)
    const labels = await engineer
      .locator('[data-test="test-signal-points"] tbody tr td:first-child')
      .evaluateAll((cells) => cells.map((c) => c.textContent?.trim()))
    expect(labels.length).toBeGreaterThan(0)
    expect(new Set(labels).size).toBe(labels.length)

    // "Propose a change" opens the request form with this limit's item filled in
    await engineer.locator('[data-test="propose-change"]').click()
    await engineer.waitForURL(new RegExp(`/changes/new\\?limitId=${limitId}$`))
    await poll(() => text(engineer, 'item-0-current-setpoint')).toContain('780 °C')
    expect(await engineer.locator('[data-test="change-title"] input').inputValue()).toBe('Change TSHH-4102')
    await fillIn(engineer, 'change-field-setpoint', '770')
    await engineer.locator('[data-test="change-save-submit"]').click()
    await engineer.waitForURL(/\/changes\/\d+$/)
    const id = Number(new URL(engineer.url()).pathname.split('/').pop())

    // back on the limit page, the new request is in its history; the item links back to the limit
    await engineer.locator('[data-test="item-target-link"]').first().click()
    await engineer.waitForURL(`${app.baseUrl}/register/limits/${limitId}`)
    await engineer.locator(`[data-test="limit-change-row-${id}"]`).waitFor()
    expect(await text(engineer, 'limit-changes-count')).toBe('2 on record')
    expect(await text(engineer, `limit-change-row-${id}`)).toContain('Waiting for approval')

    for (const p of [engineer, approver, technician]) await p.context().close()
  })
})

import type { Page } from 'playwright-core'
import { describe, expect, it } from 'vitest'
import { createDb } from '../../server/db/index.ts'
import { systemClock } from '../../server/clock.ts'
import { seedDemoShiftHandover } from '../../server/seed/demo-shift-handover.ts'
import { heaterThermocouple, heaterTripBody } from '../api/helpers/factories.ts'
import { callApi, fillIn, pageFor, readyToImplement, signInAs, testText, useBrowserApp } from './helpers.ts'

// the other shift's supervisor, as the demo plant's own seed makes them: a handover needs an outgoing and an incoming one
const app = useBrowserApp({
  seed: async (ownerUrl) => {
    const owner = createDb(ownerUrl, 2).db
    await seedDemoShiftHandover(owner, systemClock)
    await owner.destroy()
  },
})
const call = <T = any>(page: Page, method: string, path: string, body?: unknown) =>
  callApi<T>(page, app.baseUrl, method, path, body)
const PW = 'limitkeeper-demo'

/** A fired heater's high outlet-temperature trip with predefined compensating measures, at most 8 h bypassed, put in service through a change. */
async function heaterTripInService(engineer: Page, approver: Page, technician: Page) {
  const site = (await call<{ items: { id: number; code: string }[] }>(engineer, 'GET', '/sites')).items.find(
    (s) => s.code === 'FHR',
  )!
  const area = (await call<{ items: { id: number }[] }>(engineer, 'GET', `/areas?siteId=${site.id}`)).items[0]
  const proc = await call(engineer, 'POST', '/processes', {
    areaId: area.id,
    name: 'Heater H-520',
    description: 'fired heater, vacuum residue',
  })
  const inst = await call(engineer, 'POST', '/instruments', heaterThermocouple(proc.id, 'TT-5201'))
  const limit = await call(engineer, 'POST', '/limits', {
    ...heaterTripBody(proc.id, [inst.id], 'TSHH-5201'),
    maxBypassHours: 8,
    bypassPermitted: true,
    compensatingMeasures: [
      'Field operator watches the local outlet temperature every 15 min',
      'Firing limited to 80 % of design',
    ],
  })
  const cr = await call(engineer, 'POST', '/change-requests', {
    siteId: site.id,
    type: 'permanent',
    title: 'Put TSHH-5201 in service',
    rationale: 'Hazard study action 12',
    items: [{ kind: 'create', limitId: limit.id }],
  })
  await readyToImplement(engineer, app.baseUrl, cr.id)
  await call(engineer, 'POST', `/change-requests/${cr.id}/submission`)
  await call(approver, 'POST', `/change-requests/${cr.id}/approvals`, { password: PW })
  await call(technician, 'POST', `/change-requests/${cr.id}/implementations`, {
    allItems: true,
    deviceListConfirmed: true,
    password: PW,
  })
  expect((await call(engineer, 'GET', `/limits/${limit.id}`)).status).toBe('active')
  return { limitId: limit.id as number, tag: limit.tag as string }
}

const text = testText
/** Waits for a condition of the page (no fixed sleeps). */
const poll = <T>(fn: () => Promise<T>) => expect.poll(fn, { timeout: 15_000 })

describe('bypasses in the browser', () => {
  it('operator requests, supervisor authorizes, the register shows it, it goes overdue, and the plant manager sees it in the review', async () => {
    // 08:00 in the site's time zone (Europe/Berlin, summer time); everyone signs in on that clock.
    app.clock.set('2026-05-04T06:00:00Z')
    const engineer = await pageFor(app, 'engineer')
    const approver = await pageFor(app, 'approver')
    const technician = await pageFor(app, 'technician')
    const { limitId, tag } = await heaterTripInService(engineer, approver, technician)
    const operator = await pageFor(app, 'operator')
    const supervisor = await pageFor(app, 'supervisor')

    // The operator requests a 4 h bypass from the limit's page, confirming the predefined measures.
    await operator.goto(`${app.baseUrl}/register/limits/${limitId}`)
    await operator.locator('[data-test="limit-request-bypass"]').click()
    await operator.waitForURL(/\/bypasses\/new\?limitId=\d+/)
    await poll(() => text(operator, 'predefined-measures')).toContain(
      'Field operator watches the local outlet temperature',
    )
    expect(await text(operator, 'bypass-duration-limits')).toMatch(/Longest bypass of TSHH-5201\s*8 h/)
    expect(await operator.locator('[data-test="bypass-submit"]').isDisabled()).toBe(true)
    await operator.locator('[data-test="confirm-measures"] input').check()
    await fillIn(operator, 'bypass-reason', 'Burner management work, work order WO-88123')
    await fillIn(operator, 'bypass-start', '2026-05-04T08:00')
    await fillIn(operator, 'bypass-duration', '9')
    await poll(() => text(operator, 'bypass-duration')).toContain('At most 8 h for TSHH-5201')
    await fillIn(operator, 'bypass-duration', '4')
    await poll(() => text(operator, 'bypass-end')).toBe('4 May 2026, 12:00 CEST')
    await operator.locator('[data-test="bypass-submit"]').click()
    await operator.waitForURL(/\/bypasses\/\d+$/)
    const id = Number(new URL(operator.url()).pathname.split('/').pop())
    await poll(() => text(operator, `bypass-status-${id}`)).toBe('Requested')
    expect(await operator.locator('[data-test="bypass-authorize"]').count()).toBe(0)
    await operator.locator('[data-test="safety-notice"]').waitFor()

    // The shift supervisor opens it from the list and authorizes with a signature (a wrong password first).
    await supervisor.locator('[data-test="nav-bypasses"]').click()
    await supervisor.locator(`[data-test="bypass-row-${id}"]`).click()
    await supervisor.waitForURL(`${app.baseUrl}/bypasses/${id}`)
    await supervisor.locator('[data-test="bypass-authorize"]').click()
    await supervisor.locator('[data-test="sign-dialog"]').waitFor()
    expect(await text(supervisor, 'sign-meaning')).toContain('By signing you authorize the bypass of TSHH-5201')
    await fillIn(supervisor, 'sign-password', 'not-my-password')
    await supervisor.locator('[data-test="sign-confirm"]').click()
    await poll(() => text(supervisor, 'sign-error')).toContain('password')
    await fillIn(supervisor, 'sign-password', PW)
    await supervisor.locator('[data-test="sign-confirm"]').click()
    await supervisor.locator('[data-test="sign-dialog"]').waitFor({ state: 'hidden' })
    await poll(() => text(supervisor, `bypass-status-${id}`)).toBe('Authorized')
    expect(await text(supervisor, 'signature-authorized')).toContain('Hedda Marlowe')

    // The operator puts it in force.
    await operator.reload()
    await operator.locator('[data-test="bypass-activate"]').click()
    // both confirmations first: the measures in place, the bypass on the operator's screen (docs/bypasses.md#workflow)
    await operator.locator('[data-test="activate-measures"] input').check()
    expect(await operator.locator('[data-test="activate-confirm"]').isDisabled()).toBe(true)
    await operator.locator('[data-test="activate-operator-screen"] input').check()
    await operator.locator('[data-test="activate-confirm"]').click()
    await poll(() => text(operator, `bypass-status-${id}`)).toBe('Active')
    await operator.locator('[data-test="bypass-active-alert"]').waitFor()

    // The register shows the limit as bypassed, and so does the limit's page.
    await operator.goto(`${app.baseUrl}/register?q=${tag}`)
    await operator.locator(`[data-test="row-${tag}"] [data-test="protection-bypassed"]`).waitFor()
    expect(
      await operator.locator(`[data-test="row-${tag}"] [data-test="protection-bypassed"]`).textContent(),
    ).toContain('Bypassed')
    await operator.goto(`${app.baseUrl}/register/limits/${limitId}`)
    await operator.locator('[data-test="limit-bypass-active"]').waitFor()

    // Past the planned end (12:00 local = 10:00 UTC) it stays active and becomes overdue; sessions ended on the idle clock.
    app.clock.set('2026-05-04T10:45:00Z')
    await signInAs(operator, app.baseUrl, 'operator')
    await operator.goto(`${app.baseUrl}/bypasses/${id}`)
    await poll(() => text(operator, `bypass-status-${id}`)).toMatch(/^Overdue by 4\d min$/)
    await operator.locator('[data-test="bypass-overdue-alert"]').waitFor()
    await operator.locator('[data-test="nav-bypasses"]').click()
    await operator.locator('[data-test="overdue-banner"]').waitFor()
    await operator.locator(`[data-test="bypass-row-${id}"].bypass-row--overdue`).waitFor()
    await operator.locator('[data-test="nav-home"]').click()
    await poll(() => text(operator, 'home-overdue-FHR')).toContain('1')
    expect(await operator.locator('[data-test="nav-risk-erosion"]').count()).toBe(0)

    // The plant manager opens the review: the bypass in the table, the overdue KPI, the charts drawn.
    const manager = await pageFor(app, 'manager')
    // risk erosion has its own entry in the menu
    await manager.locator('[data-test="nav-risk-erosion"]').click()
    await manager.waitForURL(`${app.baseUrl}/bypasses/risk`)
    await poll(() => text(manager, 'risk-caution')).toContain('Low demand mode only; not a SIL verification')
    await manager.locator('[data-test="nav-bypass-review"]').click()
    await manager.waitForURL(`${app.baseUrl}/bypasses/review`)
    await manager.locator('[data-test="review-table"]').waitFor()
    await manager.locator(`[data-test="review-row-${id}"]`).waitFor()
    expect(await manager.locator(`[data-test="review-row-${id}"]`).textContent()).toContain('TSHH-5201')
    await poll(() => text(manager, `review-overdue-${id}`)).toMatch(/^4\d min$/)
    await poll(() =>
      manager
        .locator('[data-test="kpi-overdue-now"] [data-test="kpi-value"]')
        .textContent()
        .then((t) => t?.trim()),
    ).toBe('1')
    expect((await manager.locator('[data-test="kpi-active-now"] [data-test="kpi-value"]').textContent())?.trim()).toBe(
      '1',
    )
    for (const chart of [
      'chart-hours-per-month',
      'chart-top-limits',
      'chart-overdue-per-month',
      'chart-share-past-end',
    ]) {
      await poll(() =>
        manager.locator(`[data-test="${chart}"] canvas, [data-test="${chart}"] svg`).count(),
      ).toBeGreaterThan(0)
    }
    const exportCsv = await manager.locator('[data-test="export-csv"]').getAttribute('href')
    const csv = await (await manager.request.get(`${app.baseUrl}${exportCsv}`)).text()
    expect(csv).toContain('TSHH-5201')

    for (const p of [engineer, approver, technician, operator, supervisor, manager]) await p.context().close()
  }, 180_000)

  it('the outgoing shift supervisor hands over two areas with notes; the incoming one accepts; both signatures shown', async () => {
    app.clock.set('2026-05-05T04:00:00Z')
    const outgoing = await pageFor(app, 'supervisor')
    const site = (await call<{ items: { id: number; code: string }[] }>(outgoing, 'GET', '/sites')).items.find(
      (s) => s.code === 'FHR',
    )!
    const incoming = await pageFor(app, 'supervisor2')
    const areas = (await call<{ items: { id: number; name: string }[] }>(outgoing, 'GET', `/areas?siteId=${site.id}`))
      .items
    const [a, b] = areas
    await outgoing.goto(`${app.baseUrl}/shift-handover?areaId=${a.id}&areaId=${b.id}`)
    await outgoing.locator(`[data-test="handover-area-${a.id}"]`).waitFor()
    await outgoing.locator(`[data-test="handover-area-${b.id}"]`).waitFor()
    // the bypass of the first test is still active and overdue in the first area
    await poll(() => text(outgoing, 'handover-bypassed')).toContain('TSHH-5201')

    await outgoing.locator('[data-test="handover-hand-over"]').click()
    await outgoing.locator('[data-test="sign-dialog"]').waitFor()
    expect(await text(outgoing, 'sign-meaning')).toContain(`By signing you hand over ${a.name}, ${b.name}`)
    await fillIn(outgoing, 'handover-notes', 'TSHH-5201 still bypassed and overdue: chase the burner crew at 07:00.')
    await fillIn(outgoing, 'sign-password', PW)
    await outgoing.locator('[data-test="sign-confirm"]').click()
    await outgoing.locator('[data-test="sign-dialog"]').waitFor({ state: 'hidden' })
    const pending = outgoing.locator('[data-test^="handover-pending-"]').first()
    await pending.waitFor()
    // the outgoing supervisor cannot accept their own handover: the button is disabled with the reason
    const acceptOwn = outgoing.locator('[data-test^="handover-accept-"]').first()
    expect(await acceptOwn.isDisabled()).toBe(true)

    await incoming.goto(`${app.baseUrl}/shift-handover?areaId=${a.id}`)
    await poll(() => text(incoming, 'handover-pending-notes')).toBe(
      'TSHH-5201 still bypassed and overdue: chase the burner crew at 07:00.',
    )
    const accept = incoming.locator('[data-test^="handover-accept-"]').first()
    await poll(() => accept.isDisabled()).toBe(false)
    await accept.click()
    await incoming.locator('[data-test="sign-dialog"]').waitFor()
    expect(await text(incoming, 'sign-meaning')).toContain('By signing you take over')
    await fillIn(incoming, 'sign-password', PW)
    await incoming.locator('[data-test="sign-confirm"]').click()
    await incoming.locator('[data-test="sign-dialog"]').waitFor({ state: 'hidden' })
    await poll(() => text(incoming, 'handover-history')).toContain('Joren Ashcombe accepted')
    expect(await text(incoming, 'handover-history')).toContain('Hedda Marlowe handed over')
    expect(await incoming.locator('[data-test^="handover-pending-"]').count()).toBe(0)
    for (const p of [outgoing, incoming]) await p.context().close()
  }, 180_000)
})

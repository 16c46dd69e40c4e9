import type { Page } from 'playwright-core'
import { afterAll, describe, expect, it } from 'vitest'
import { createDb } from '../../server/db/index.ts'
import { systemClock } from '../../server/clock.ts'
import { type ModbusSim, startModbusSim } from '../../server/dev/modbus-sim.ts'
import { seedDemoReconciliation } from '../../server/seed/demo-reconciliation.ts'
import { readBackOf } from '../api/helpers/factories.ts'
import { callApi, pageFor, readyToImplement, testText, useBrowserApp } from './helpers.ts'

// The demo plant's devices on a simulated Modbus device (docs/reconciliation.md#the-simulated-device): its two
// deliberate differences become findings after a run; one is closed by a change request (the register follows the
// plant), the other by a correction on the device confirmed by the next run (the plant follows the register).
let sim: ModbusSim
const app = useBrowserApp({
  register: true,
  seed: async (ownerUrl) => {
    sim = await startModbusSim(0, { quiet: true })
    const owner = createDb(ownerUrl, 2).db
    await seedDemoReconciliation(owner, systemClock, { port: sim.port })
    await owner.destroy()
  },
})
afterAll(async () => {
  await sim?.close()
})
const call = <T = any>(page: Page, method: string, path: string, body?: unknown) =>
  callApi<T>(page, app.baseUrl, method, path, body)
const PW = 'limitkeeper-demo'
const text = testText

async function runSource(page: Page, name: string) {
  await page.goto(`${app.baseUrl}/reconciliation/sources`)
  await page.getByRole('link', { name }).click()
  await expect.poll(() => text(page, 'source-name')).toBe(name)
  await page.locator('[data-test="source-run-now"]').click()
  await page.getByText('Reconciled 2 limits').waitFor()
}

async function openFinding(page: Page, tag: string) {
  await page.goto(`${app.baseUrl}/reconciliation`)
  await page.locator('[data-test="finding-table"]').getByRole('link', { name: tag }).click()
  await page.locator('[data-test="finding-kind"]').waitFor()
}

describe('reconciliation of the demo devices in the browser', () => {
  it('shows both deliberate differences and closes one by a change request, the other by a device correction', async () => {
    const engineer = await pageFor(app, 'engineer')
    // the caution is on the screen, and the two findings appear after a run of each device
    await engineer.goto(`${app.baseUrl}/reconciliation`)
    await engineer.locator('[data-test="recon-caution"]').waitFor()
    expect(await text(engineer, 'recon-caution')).toContain('Nobody changes a device from this screen')
    await runSource(engineer, 'H-101 bridgewall limiter')
    await runSource(engineer, 'H-220 outlet limiter')
    await engineer.goto(`${app.baseUrl}/reconciliation`)
    const table = engineer.locator('[data-test="finding-table"]')
    await expect.poll(() => table.locator('tbody tr.finding-row').count()).toBe(2)
    const rows = (await table.locator('tbody tr.finding-row').allTextContents()).map((t) => t.replace(/\s+/g, ' '))
    expect(rows.find((r) => r.includes('TSHH-103'))).toMatch(/Changed without MOC.*900 °C.*910 °C/)
    expect(rows.find((r) => r.includes('TSHH-220'))).toContain('Bypassed without authorization')

    // TSHH-103: the register follows the plant. Acknowledge, then the accept and link buttons are offered.
    await openFinding(engineer, 'TSHH-103')
    expect(await text(engineer, 'finding-register-value')).toBe('900 °C')
    expect(await text(engineer, 'finding-device-value')).toBe('910 °C')
    // before acknowledgement the rule book refuses linking (the button is disabled, with the reason)
    await expect.poll(() => engineer.locator('[data-test="finding-link-change"]').isDisabled()).toBe(true)
    await engineer.locator('[data-test="finding-acknowledge"]').click()
    await engineer.locator('[data-test="finding-state-acknowledged"]').waitFor()
    const finding = await call(engineer, 'GET', `/findings?q=TSHH-103`).then((r) => r.items[0])
    const cr = await call(engineer, 'POST', '/change-requests', {
      siteId: finding.siteId,
      type: 'permanent',
      title: 'TSHH-103 to 910 °C as set on the limiter',
      rationale: 'Burner vendor recommendation confirmed by the hazard study',
      items: [{ kind: 'modify', limitId: finding.limitId, changes: { setpoint: 910 } }],
    })
    await readyToImplement(engineer, app.baseUrl, cr.id)
    await call(engineer, 'POST', `/change-requests/${cr.id}/submission`)
    await engineer.locator('[data-test="finding-link-change"]').click()
    await engineer.locator('[data-test="link-change-select"]').click()
    await engineer.getByRole('option', { name: new RegExp(`#${cr.id} `) }).click()
    await engineer.locator('[data-test="link-change-confirm"]').click()
    await engineer.locator('[data-test="finding-change-link"]').waitFor()
    // approval and implementation by the people who do them
    const approvers = [await pageFor(app, 'approver'), await pageFor(app, 'approver2')]
    let submitted = await call(engineer, 'GET', `/change-requests/${cr.id}`)
    for (const a of approvers.slice(0, submitted.approvalsRequired))
      await call(a, 'POST', `/change-requests/${cr.id}/approvals`, { password: PW })
    const technician = await pageFor(app, 'technician')
    const approved = await call(engineer, 'GET', `/change-requests/${cr.id}`)
    for (const item of approved.items)
      await call(technician, 'POST', `/change-requests/${cr.id}/implementations`, {
        itemId: item.id,
        readBack: readBackOf(item),
        password: PW,
      })
    submitted = await call(engineer, 'GET', `/change-requests/${cr.id}`)
    expect(submitted.status).toBe('implemented')
    await engineer.reload()
    await engineer.locator('[data-test="finding-run-source"]').click()
    await engineer.locator('[data-test="finding-state-resolved"]').waitFor()
    expect(await text(engineer, 'finding-resolution')).toContain('by a change request')

    // TSHH-220: the plant follows the register. The bypass flag is cleared on the device under the plant's
    // procedures (here: the simulator), and the next run confirms it.
    await openFinding(engineer, 'TSHH-220')
    await engineer.locator('[data-test="finding-acknowledge"]').click()
    await engineer.locator('[data-test="finding-state-acknowledged"]').waitFor()
    sim.setValue(2, 'TSHH-220', 'bypassed', '0')
    await engineer.locator('[data-test="finding-run-source"]').click()
    await engineer.locator('[data-test="finding-state-resolved"]').waitFor()
    expect(await text(engineer, 'finding-resolution')).toContain('by a correction on the device')

    // nothing open is left, and the device never saw a write
    await engineer.goto(`${app.baseUrl}/reconciliation`)
    await engineer.locator('[data-test="figures-open-none"]').waitFor()
    expect(sim.writeAttempts).toEqual([])

    // the limit page shows its last reconciliation, now matched
    await engineer.goto(`${app.baseUrl}/register/limits/${finding.limitId}`)
    await engineer.locator('[data-test="limit-reconciliation"]').waitFor()
    await expect.poll(() => text(engineer, 'limit-recon-outcome')).toBe('Matched')
  }, 300_000)

  it('an operator sees the findings but is offered none of the actions', async () => {
    const operator = await pageFor(app, 'operator')
    await operator.goto(`${app.baseUrl}/reconciliation`)
    await operator.locator('[data-test="nav-reconciliation"]').first().waitFor()
    const [f] = (await call(operator, 'GET', '/findings?q=TSHH-220&state=open&state=acknowledged&state=resolved')).items
    await operator.goto(`${app.baseUrl}/reconciliation/findings/${f.id}`)
    await operator.locator('[data-test="finding-kind"]').waitFor()
    expect(await operator.locator('[data-test="finding-acknowledge"]').count()).toBe(0)
    expect(await operator.locator('[data-test="finding-accept"]').count()).toBe(0)
    expect(await operator.locator('[data-test="finding-link-change"]').count()).toBe(0)
  }, 120_000)
})

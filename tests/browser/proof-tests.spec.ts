import { describe, expect, it } from 'vitest'
import { callApi, pageFor, useBrowserApp } from './helpers.ts'

// The proof-test programme in the browser: the demo register's 2oo3 trip TSHH-101 (385 °C on TT-101A/B/C) tested
// channel by channel, and a deferral of its next test requested by the technician and approved by the plant manager
// (the site policy's approver for SIL 2). docs/trip-tests.md#voted-functions, docs/trip-tests.md#test-deferrals.

const app = useBrowserApp({ register: true })
const PW = 'limitkeeper-demo'

describe('proof tests in the browser', () => {
  it('records a 2oo3 test channel by channel, then defers the next test through approval', async () => {
    app.clock.set('2026-09-14T07:45:00Z')
    const tech = await pageFor(app, 'technician')
    const found = await callApi<{ items: { id: number; tag: string }[] }>(
      tech,
      app.baseUrl,
      'GET',
      '/limits?q=TSHH-101&pageSize=5',
    )
    const limit = found.items.find((l) => l.tag === 'TSHH-101')!
    const field = (test: string) => tech.locator(`[data-test="${test}"] input`)

    // the form offers the channels of the voted function, channel by channel by default
    await tech.goto(`${app.baseUrl}/tests/new?limitId=${limit.id}`)
    await tech.locator('[data-test="channels"]').waitFor()
    expect(await tech.locator('[data-test="by-channel"]').textContent()).toContain('voting 2oo3')
    // the precautions before the test (docs/trip-tests.md#precautions): the final element isolated, outside a
    // hazardous area
    await tech.locator('[data-test="precaution-isolated-yes"]').click()
    await field('precaution-permit').fill('PTW-2026-3402')
    await tech.locator('[data-test="precaution-control-room"] input').check()
    await tech.locator('[data-test="precaution-hazardous-no"]').click()
    await field('performed-at').fill('2026-09-14T09:30')
    await field('calibrator-id').fill('CAL-FHR-03')
    await field('calibrator-due').fill('2027-03-31')
    await field('channel-0-as-found').fill('385')
    await field('channel-1-as-found').fill('385')
    await tech.locator('[data-test="channel-2-no-trip"] input').check()
    // two of three tripped: the vote is reached, but the channel that did not trip fails the test
    await expect.poll(() => tech.locator('[data-test="channel-2-result"]').textContent()).toContain('FAIL')
    expect(await tech.locator('[data-test="channel-0-result"]').textContent()).toContain('Pass')
    expect(await tech.locator('[data-test="vote-summary"]').textContent()).toContain('Vote reached: 2 of 2')
    expect(await tech.locator('[data-test="preview-verdict"]').textContent()).toContain('FAILS')
    await tech.locator('[data-test="save-test"]').click()
    await tech.waitForURL(/\/tests\/\d+$/)
    await tech.locator('[data-test="channel-results"]').waitFor()
    expect(await tech.locator('[data-test="channel-result-TT-101C"]').textContent()).toContain('FAIL')
    expect(await tech.locator('[data-test="channel-result-TT-101A"]').textContent()).toContain('Pass')

    // a passing full test a year ago (by the API): the next test is due on 20 September 2026
    const past = await callApi<{ id: number }>(tech, app.baseUrl, 'POST', '/trip-tests', {
      limitId: limit.id,
      kind: 'full',
      method: 'injection',
      injectionPoint: 'sensor',
      sourceMode: 'tc_simulate',
      calibratorId: 'CAL-FHR-03',
      calibratorDueDate: '2026-12-31',
      performedAt: '2025-09-20T08:00:00Z',
      asFound: 385,
      finalElementOk: true,
    })
    await callApi(tech, app.baseUrl, 'POST', `/trip-tests/${past.id}/signatures`, {
      meaning: 'performed',
      password: PW,
    })

    // the technician requests a deferral to 10 October from the limit's page
    await tech.goto(`${app.baseUrl}/register/limits/${limit.id}`)
    await tech.locator('[data-test="deferral-request"]').click()
    await tech.locator('[data-test="deferral-dialog"]').waitFor()
    await field('deferral-new-date').fill('2026-10-10')
    await tech.locator('[data-test="deferral-reason"] textarea').first().fill('Heater runs until the October shutdown')
    await tech
      .locator('[data-test="deferral-measures"] textarea')
      .first()
      .fill('Console operator watches the three outlet temperatures')
    await tech.locator('[data-test="deferral-submit"]').click()
    await tech.locator('[data-test="deferral-status"]').first().waitFor()
    await expect.poll(() => tech.locator('[data-test="deferral-status"]').first().textContent()).toContain('requested')
    // nobody decides a deferral they requested: the technician is offered no approval
    expect(await tech.locator('[data-test="deferral-approve"]').count()).toBe(0)

    // the plant manager approves with a signature; the due date moves
    const manager = await pageFor(app, 'manager')
    await manager.goto(`${app.baseUrl}/register/limits/${limit.id}`)
    await manager.locator('[data-test="deferral-approve"]').click()
    await manager.locator('[data-test="sign-dialog"]').waitFor()
    await manager.locator('[data-test="sign-password"] input').fill(PW)
    await manager.locator('[data-test="sign-confirm"]').click()
    await expect
      .poll(() => manager.locator('[data-test="deferral-status"]').first().textContent())
      .toContain('approved, in force')
    const after = await callApi<{ testDueDate: string }>(manager, app.baseUrl, 'GET', `/limits/${limit.id}`)
    expect(after.testDueDate).toBe('2026-10-10')
    await tech.context().close()
    await manager.context().close()
  })
})

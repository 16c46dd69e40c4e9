import { flushPromises } from '@vue/test-utils'
import { afterEach, describe, expect, it, vi } from 'vitest'
import type { DemandRateRow, DemandRates } from '@shared/schemas/demands.ts'
import type { TestDeferralDto } from '@shared/schemas/trip-tests.ts'
import type { Role } from '@shared/schemas/users.ts'
import LimitDemandRatesPanel from '@/features/demands/components/LimitDemandRatesPanel.vue'
import LimitDeferralsPanel from '@/features/trip-tests/components/LimitDeferralsPanel.vue'
import {
  answerApi,
  clickInDialog,
  FHR,
  mountView,
  type Routes,
  stubVisualViewport,
  typeInDialog,
} from '../mount-view.ts'
import { heaterTrip } from './limit-fixture.ts'

// Two panels of the limit page whose action opens a dialog: the hazard study's demand rates (docs/demands.md) and the
// test deferrals (docs/trip-tests.md#test-deferrals). The action is offered by the rule of each (who may update the
// limit; who may request a deferral of an active limit with a due date and no open deferral), and after a save the
// panel's list is asked again through the query cache and shows the new answer. Expected values are written by hand.

const LIMIT = heaterTrip('active')

afterEach(() => vi.unstubAllGlobals())

async function open(panel: typeof LimitDemandRatesPanel | typeof LimitDeferralsPanel, roles: Role[], api: Routes) {
  stubVisualViewport()
  const calls = answerApi(api)
  const w = await mountView(panel, {
    user: { id: 7, roles: roles.map((role) => ({ siteId: FHR.id, role })) },
    props: { limit: LIMIT },
  })
  return { w, calls }
}

/** Whether the panel shows its action's button to a person of the role. */
async function offered(panel: Parameters<typeof open>[0], role: Role, api: Routes, test: string) {
  return (await open(panel, [role], api)).w.find(`[data-test="${test}"]`).exists()
}

describe('LimitDemandRatesPanel', () => {
  const row = (assumed: number | null): DemandRateRow => ({
    limitId: LIMIT.id,
    limitTag: LIMIT.tag,
    siteId: FHR.id,
    siteCode: FHR.code,
    sil: null,
    commissionedAt: null,
    observedYears: 1,
    demands: 0,
    spuriousTrips: 0,
    observedDemandRatePerYear: 0,
    assumedDemandRatePerYear: assumed,
    observedSpuriousRatePerYear: 0,
    assumedSpuriousRatePerYear: null,
    demandRateAboveAssumed: false,
    spuriousRateAboveAssumed: false,
  })
  const rates = (assumed: number | null): DemandRates => ({
    period: { from: '2025-07-06', to: '2026-07-06' },
    limits: [row(assumed)],
    sites: [],
    note: '',
  })

  it('the edit is offered to a safety engineer, not to a technician', async () => {
    const api = { 'GET /demands/rates': () => ({ body: rates(null) }) }
    expect(await offered(LimitDemandRatesPanel, 'safety_engineer', api, 'assumptions-edit')).toBe(true)
    expect(await offered(LimitDemandRatesPanel, 'technician', api, 'assumptions-edit')).toBe(false)
  })

  it('saved rates are sent as numbers and the rates asked again show them', async () => {
    let saved: number | null = null
    const { w, calls } = await open(LimitDemandRatesPanel, ['safety_engineer'], {
      'GET /demands/rates': () => ({ body: rates(saved) }),
      [`PUT /demands/assumptions/${LIMIT.id}`]: (_url, init) => {
        saved = JSON.parse(String(init?.body)).assumedDemandRatePerYear
        return { body: { limitId: LIMIT.id } }
      },
    })
    expect(w.find('[data-test="rate-demand"] [data-test="rate-assumed"]').text()).toBe('—')
    await w.find('[data-test="assumptions-edit"]').trigger('click')
    await flushPromises()
    typeInDialog('assumed-demand', '0.1')
    typeInDialog('assumed-reason', 'Hazard study H-101, node 4')
    clickInDialog('assumptions-save')
    await vi.waitFor(() =>
      expect(w.find('[data-test="rate-demand"] [data-test="rate-assumed"]').text()).toBe(
        '0.1 /year (once in 10 years)',
      ),
    )
    expect(calls.filter((c) => c.method === 'PUT').map((c) => c.body)).toEqual([
      {
        assumedDemandRatePerYear: 0.1,
        assumedSpuriousRatePerYear: null,
        commissionedAt: null,
        reason: 'Hazard study H-101, node 4',
      },
    ])
    expect(calls.filter((c) => c.path === '/demands/rates')).toHaveLength(2)
  })
})

describe('LimitDeferralsPanel', () => {
  const deferral: TestDeferralDto = {
    id: 3,
    limitId: LIMIT.id,
    limitTag: LIMIT.tag,
    siteId: FHR.id,
    sil: null,
    status: 'requested',
    inForce: false,
    originalDueDate: '2027-05-01',
    newDueDate: '2027-06-01',
    extensionDays: 31,
    reason: 'Heater runs until the June shutdown',
    compensatingMeasures: ['Operator watches TI locally every 15 min'],
    risk: {
      intervalMonths: 12,
      stretchedIntervalHours: 9504,
      designPfd: null,
      stretchedPfd: null,
      targetSil: null,
      meetsTarget: null,
      explanation: 'Not SIL-rated: no PFDavg target.',
    },
    requiredRole: 'safety_engineer',
    requestedById: 7,
    requestedBy: 'Someone',
    requestedAt: '2026-07-06T10:00:00Z',
    decidedBy: null,
    decidedAt: null,
    decisionComment: '',
    contentHash: 'cd'.repeat(32),
    actions: {
      approve: { allowed: false, status: 403, reason: 'A safety engineer decides' },
      reject: { allowed: false, status: 403, reason: 'A safety engineer decides' },
    },
  }

  it('a request is offered to a technician while no deferral is open, not to an approver', async () => {
    const none = { 'GET /test-deferrals': () => ({ body: { items: [], total: 0 } }) }
    expect(await offered(LimitDeferralsPanel, 'technician', none, 'deferral-request')).toBe(true)
    expect(await offered(LimitDeferralsPanel, 'approver', none, 'deferral-request')).toBe(false)
    const openOne = { 'GET /test-deferrals': () => ({ body: { items: [deferral], total: 1 } }) }
    expect(await offered(LimitDeferralsPanel, 'technician', openOne, 'deferral-request')).toBe(false)
  })

  it('a request is sent and the deferrals asked again show it, with no second request offered', async () => {
    let requested = false
    const { w, calls } = await open(LimitDeferralsPanel, ['technician'], {
      'GET /test-deferrals': () => ({ body: requested ? { items: [deferral], total: 1 } : { items: [], total: 0 } }),
      'POST /test-deferrals': () => {
        requested = true
        return { body: deferral }
      },
    })
    await w.find('[data-test="deferral-request"]').trigger('click')
    await flushPromises()
    typeInDialog('deferral-new-date', '2027-06-01')
    typeInDialog('deferral-reason', 'Heater runs until the June shutdown')
    typeInDialog('deferral-measures', 'Operator watches TI locally every 15 min\n\n')
    clickInDialog('deferral-submit')
    await vi.waitFor(() => expect(w.find('[data-test="deferral-status"]').text()).toBe('requested'))
    expect(calls.filter((c) => c.method === 'POST').map((c) => c.body)).toEqual([
      {
        limitId: LIMIT.id,
        newDueDate: '2027-06-01',
        reason: 'Heater runs until the June shutdown',
        compensatingMeasures: ['Operator watches TI locally every 15 min'],
      },
    ])
    expect(calls.filter((c) => c.path === '/test-deferrals' && c.method === 'GET')).toHaveLength(2)
    expect(w.find('[data-test="deferral-request"]').exists()).toBe(false)
  })
})

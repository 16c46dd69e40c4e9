import { afterEach, describe, expect, it, vi } from 'vitest'
import type { ChangeProposalDto, ProposalStatus } from '@shared/schemas/change-proposals.ts'
import type { Role } from '@shared/schemas/users.ts'
import ProposalDetailView from '@/features/change-proposals/views/ProposalDetailView.vue'
import {
  clickInDialog,
  FHR,
  NOW,
  openDialog,
  resetPage,
  type Routes,
  ruleButtons,
  typeInDialog,
  openRecordPage,
} from '../mount-view.ts'

// The proposal page offers "Develop into a change request" and "Decline" as the change-proposal rule book allows
// (docs/change-requests.md#change-proposals, "Who does what"): only a safety engineer of the proposal's site, and
// only while the proposal is open; every other role of the site reads it. The clock is fixed at 12:00 UTC.

const ME = 7
const PROPOSER = 100
const OTHER_SITE = 2

function proposal(status: ProposalStatus, o: Partial<ChangeProposalDto> = {}): ChangeProposalDto {
  const decided = status !== 'open'
  return {
    id: 42,
    siteId: FHR.id,
    siteCode: 'FHR',
    limitId: 5,
    limitTag: 'TSHH-101',
    title: 'Raise the TSHH-101 trip by 5 °C',
    reason: 'The trip comes in at every start-up of heater H-101',
    status,
    proposerId: PROPOSER,
    proposerName: 'Olive Tanager',
    createdAt: '2026-07-05T08:00:00.000Z',
    decidedBy: decided ? 'Ida Marlow' : null,
    decidedAt: decided ? '2026-07-06T09:00:00.000Z' : null,
    declineReason: status === 'declined' ? 'The margin to the design temperature is too small' : null,
    changeRequestId: status === 'taken_up' ? 9 : null,
    ...o,
  }
}

const open = (p: ChangeProposalDto, roles: Role[], siteId = FHR.id, more: Routes = {}) =>
  openRecordPage(ProposalDetailView, `/change-proposals/${p.id}`, p, { id: ME, roles, siteId }, more)

// the refusal of a decided proposal (docs/change-requests.md#change-proposals: decided once)
const TAKEN_UP = 'This proposal is taken up already.'
const DECLINED = 'This proposal is declined already.'

type Wrapper = Awaited<ReturnType<typeof open>>['w']
/** The buttons shown, each enabled (true) or not. */
const buttons = (w: Wrapper) => ruleButtons(w, 'proposal', ['take-up', 'decline'])

afterEach(resetPage)

describe('ProposalDetailView: buttons follow the change-proposal rule book', () => {
  it.each<[string, ProposalStatus, Role[], number, Record<string, true | string>]>([
    [
      'a safety engineer of the site takes up or declines an open proposal',
      'open',
      ['safety_engineer'],
      FHR.id,
      { 'take-up': true, decline: true },
    ],
    ['an operator raises proposals but does not decide on them', 'open', ['operator'], FHR.id, {}],
    ['a maintenance technician does not decide', 'open', ['technician'], FHR.id, {}],
    ['a control engineer does not decide', 'open', ['control_engineer'], FHR.id, {}],
    ['a shift supervisor does not decide', 'open', ['shift_supervisor'], FHR.id, {}],
    ['an approver reads only', 'open', ['approver'], FHR.id, {}],
    ['the plant manager reads only', 'open', ['plant_manager'], FHR.id, {}],
    ['an auditor reads only', 'open', ['auditor'], FHR.id, {}],
    ['a safety engineer of another site does not decide', 'open', ['safety_engineer'], OTHER_SITE, {}],
    [
      'a proposal taken up is decided once: both shown disabled with the reason',
      'taken_up',
      ['safety_engineer'],
      FHR.id,
      { 'take-up': TAKEN_UP, decline: TAKEN_UP },
    ],
    [
      'a declined proposal is decided once: both shown disabled with the reason',
      'declined',
      ['safety_engineer'],
      FHR.id,
      { 'take-up': DECLINED, decline: DECLINED },
    ],
  ])('%s (%s, %j)', async (_what, status, roles, siteId, expected) => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const { w } = await open(proposal(status), roles, siteId)
    expect(w.find('[data-test="proposal-title"]').text()).toBe('Raise the TSHH-101 trip by 5 °C')
    expect(buttons(w)).toEqual(expected)
  })

  it('"Develop into a change request" opens the request form with the proposal', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const { w } = await open(proposal('open'), ['safety_engineer'])
    expect(w.find('[data-test="proposal-take-up"]').attributes('href')).toBe('/changes/new?proposal=42')
  })

  it('"Decline" sends the reason, then shows the proposal declined with its buttons disabled', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const reason = 'The margin to the design temperature is too small'
    const { w, calls } = await open(proposal('open'), ['safety_engineer'], FHR.id, {
      'POST /change-proposals/42/decline': () => ({ body: proposal('declined', { declineReason: reason }) }),
    })
    await openDialog(w, 'proposal-decline')
    typeInDialog('proposal-decline-reason-input', reason)
    clickInDialog('proposal-decline-confirm')
    await vi.waitFor(() => expect(w.find('[data-test="proposal-decline-reason"]').exists()).toBe(true))

    expect(calls.filter((c) => c.method === 'POST')).toEqual([
      { method: 'POST', path: '/change-proposals/42/decline', body: { reason } },
    ])
    expect(w.find('[data-test="proposal-decline-reason"]').text()).toBe(reason)
    expect(w.find('[data-test="proposal-status"]').text()).toBe('Declined')
    expect(buttons(w)).toEqual({ 'take-up': DECLINED, decline: DECLINED })
  })

  it('a refused decline keeps the dialog open with the sentence above the buttons and the message at the reason', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const { w } = await open(proposal('open'), ['safety_engineer'], FHR.id, {
      'POST /change-proposals/42/decline': () => ({
        status: 400,
        body: {
          error: {
            code: 'VALIDATION_FAILED',
            message: 'Some fields are not valid',
            details: { fields: { reason: ['Say why the proposal is declined'] } },
          },
        },
      }),
    })
    await openDialog(w, 'proposal-decline')
    clickInDialog('proposal-decline-confirm')
    const error = () => document.body.querySelector('[data-test="proposal-decline-error"]')
    await vi.waitFor(() => expect(error()?.textContent).toContain('Some fields are not valid'))
    expect(document.body.textContent).toContain('Say why the proposal is declined')
    expect(document.body.querySelector('.v-dialog.v-overlay--active')).not.toBeNull()
    expect(w.find('[data-test="proposal-status"]').text()).toBe('Open')
  })
})

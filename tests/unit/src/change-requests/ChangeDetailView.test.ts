import { afterEach, describe, expect, it, vi } from 'vitest'
import { defineComponent, h } from 'vue'
import type { ChangeRequestDto } from '@shared/schemas/change-requests.ts'
import type { Role } from '@shared/schemas/users.ts'
import AppSignDialog from '@/components/AppSignDialog.vue'
import ChangeAttachments from '@/features/change-requests/components/ChangeAttachments.vue'
import LimitChangesPanel from '@/features/change-requests/components/LimitChangesPanel.vue'
import ChangeDetailView from '@/features/change-requests/views/ChangeDetailView.vue'
import {
  SITE_CHOICES,
  mountRecordPage,
  stubVisualViewport,
  answerApi,
  at,
  FHR,
  NOW,
  type Routes,
  openRecordPage,
} from '../mount-view.ts'
import { checklist, item, ME, PROPOSER, request } from './change-fixture.ts'

// The change request's page builds its buttons from the change-request rule book (docs/change-requests.md#the-rule-book):
// each shown where the person has a part in that step, enabled or disabled with the rule book's reason, for the
// states and roles of the rule book's table. The expected answers are written by hand from that table. The clock is
// fixed at 12:00 UTC.

async function open(cr: ChangeRequestDto, roles: Role[], userId = ME) {
  return (await openRecordPage(ChangeDetailView, `/change-requests/${cr.id}`, cr, { id: userId, roles })).w
}

type Wrapper = Awaited<ReturnType<typeof open>>
const BUTTONS = ['edit', 'submit', 'withdraw', 'approve', 'reject', 'implement-all', 'close'] as const
/** Each button shown (request's and items'): true when enabled, else the reason it is disabled. */
function buttons(w: Wrapper, items = 1) {
  const out: Record<string, true | string> = {}
  const read = (name: string, selector: string) => {
    const btn = w.find(selector)
    if (!btn.exists()) return
    out[name] = btn.attributes('disabled') === undefined ? true : (btn.element.parentElement?.dataset.reason ?? '')
  }
  for (const name of BUTTONS) read(name, `[data-test="cr-${name}"]`)
  for (let i = 0; i < items; i++) read(`item-${i}`, `[data-test="item-implement-${i}"]`)
  return out
}

const approvedBy = (userId: number) => ({
  id: 1,
  userId,
  name: 'Someone',
  meaning: 'approved',
  at: at(-6),
  contentHash: 'ab'.repeat(32),
  matchesContent: true,
  voided: false,
})

afterEach(() => {
  vi.useRealTimers()
  vi.unstubAllGlobals()
})

describe('ChangeDetailView: buttons follow the change-request rule book', () => {
  it.each<[string, ChangeRequestDto, Role[], Record<string, true>]>([
    [
      'a safety engineer edits, submits or withdraws a draft',
      request('draft'),
      ['safety_engineer'],
      { edit: true, submit: true, withdraw: true },
    ],
    ['a technician has no part in a draft', request('draft'), ['technician'], {}],
    [
      'a safety engineer may still edit or withdraw a submitted request',
      request('submitted'),
      ['safety_engineer'],
      { edit: true, withdraw: true },
    ],
    [
      'an approver approves or rejects a submitted request',
      request('submitted'),
      ['approver'],
      { approve: true, reject: true },
    ],
    [
      'a technician implements an approved request item by item',
      request('approved'),
      ['technician'],
      { 'item-0': true },
    ],
    ['a control engineer implements too', request('approved'), ['control_engineer'], { 'item-0': true }],
    ['a safety engineer has nothing to do on an approved request', request('approved'), ['safety_engineer'], {}],
    ['a safety engineer closes an implemented request', request('implemented'), ['safety_engineer'], { close: true }],
    [
      'a shift supervisor implements an emergency change before its approval',
      request('submitted', { type: 'emergency' }),
      ['shift_supervisor'],
      { 'item-0': true },
    ],
    [
      'an approver approves an implemented emergency change after the fact (no reject)',
      request('implemented', { type: 'emergency', approvedAt: null, approvalsHeld: 0, approvalExpiresAt: null }),
      ['approver'],
      { approve: true },
    ],
    ['nothing is left to do on a closed request', request('closed'), ['safety_engineer', 'approver', 'technician'], {}],
    ['nothing is left to do on a rejected request', request('rejected'), ['safety_engineer', 'approver'], {}],
  ])('%s', async (_what, cr, roles, expected) => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const w = await open(cr, roles)
    expect(w.find('[data-test="cr-status"]').exists()).toBe(true)
    expect(buttons(w)).toEqual(expected)
  })

  it('a draft without items: "Submit" is shown disabled (422 on the server), edit and withdraw stay', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const w = await open(request('draft', { items: [] }), ['safety_engineer'])
    expect(buttons(w, 0)).toEqual({ edit: true, submit: 'Add at least one item.', withdraw: true })
  })

  it('the proposer who is an approver sees "Approve" and "Reject" disabled: an independent second person signs', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const b = buttons(await open(request('submitted'), ['approver'], PROPOSER))
    expect(b.approve).toContain('Nobody approves a change they proposed')
    expect(b.reject).toContain('Nobody approves a change they proposed')
  })

  it('implement: disabled while the before-implementation checklist is open, with the open items', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const cr = request('approved', { checklist: checklist(['training']) })
    const b = buttons(await open(cr, ['technician']))
    expect(b).toEqual({ 'item-0': expect.stringContaining('Complete the before-implementation checklist first') })
    expect(b['item-0']).toContain('People affected informed and trained')
  })

  it('implement: refused to the person who approved the request, and after the approval expired', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const mine = request('approved', { signatures: [approvedBy(ME)] as ChangeRequestDto['signatures'] })
    expect(buttons(await open(mine, ['technician', 'approver']))['item-0']).toContain(
      'Nobody implements a change they approved',
    )
    vi.unstubAllGlobals()
    const expired = request('approved', { approvalExpiresAt: at(-1) })
    expect(buttons(await open(expired, ['technician']))['item-0']).toContain('The approval has expired')
  })

  it('implement: a stale item is disabled with the reason, an implemented one has no button', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const cr = request('approved', { items: [item(1, { stale: true }), item(2, { implementedAt: at(-1) })] })
    expect(buttons(await open(cr, ['technician']), 2)).toEqual({
      'item-0': expect.stringContaining('changed since the request was written'),
    })
  })

  it('"Implement all" is offered for a baseline of new limits only, and follows the rule book', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const creates = [1, 2, 3].map((id) => item(id, { kind: 'create', changes: {} }))
    expect(buttons(await open(request('approved', { items: creates }), ['technician']), 3)).toEqual({
      'implement-all': true,
      'item-0': true,
      'item-1': true,
      'item-2': true,
    })
    vi.unstubAllGlobals()
    const blocked = request('approved', { items: creates, checklist: checklist(['pssr']) })
    const b = buttons(await open(blocked, ['technician']), 3)
    expect(b['implement-all']).toContain('Complete the before-implementation checklist first')
    vi.unstubAllGlobals()
    // two changes to limits in service: implemented item by item with their read-back, no bulk button
    const changes = request('approved', { items: [item(1), item(2)] })
    expect(buttons(await open(changes, ['technician']), 2)).toEqual({ 'item-0': true, 'item-1': true })
  })

  it('close: disabled while the close-out checklist is open, and for an emergency change not yet approved', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const open1 = request('implemented', { checklist: checklist(['drawings']) })
    const b = buttons(await open(open1, ['safety_engineer']))
    expect(b.close).toContain('Complete the close-out checklist first')
    expect(b.close).toContain('Drawings and loop diagrams updated as built')
    vi.unstubAllGlobals()
    const emergency = request('implemented', {
      type: 'emergency',
      approvedAt: null,
      approvalsHeld: 0,
      approvalExpiresAt: null,
    })
    expect(buttons(await open(emergency, ['safety_engineer'])).close).toContain('not approved yet')
  })
})

// The notices above the facts (docs/change-requests.md): one for each case that holds, in the page's order.
describe('ChangeDetailView: notices', () => {
  const NOTICES = [
    'approve-blocked',
    'cr-signature-mismatch',
    'cr-approval-expired',
    'cr-emergency-alert',
    'cr-expired-alert',
  ]
  /** The notices shown, in the page's order. */
  const notices = (w: Wrapper) =>
    w
      .findAll('[data-test]')
      .map((a) => a.attributes('data-test'))
      .filter((t) => NOTICES.includes(t ?? ''))

  it('a changed content, an expired approval and an expired temporary change each show their notice', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const cr = request('approved', {
      type: 'temporary',
      temporaryState: 'expired',
      expiresAt: at(-3),
      approvalExpiresAt: at(-1),
      signatures: [{ ...approvedBy(PROPOSER), matchesContent: false }] as ChangeRequestDto['signatures'],
    })
    const w = await open(cr, ['safety_engineer'])
    expect(notices(w)).toEqual(['cr-signature-mismatch', 'cr-approval-expired', 'cr-expired-alert'])
    expect(w.find('[data-test="cr-expired-alert"]').text()).toContain('passed its end')
  })

  it('an emergency change not yet approved says it must be approved within 24 hours', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const cr = request('implemented', {
      type: 'emergency',
      approvedAt: null,
      approvalsHeld: 0,
      approvalExpiresAt: null,
    })
    const w = await open(cr, ['safety_engineer'])
    expect(notices(w)).toEqual(['cr-emergency-alert'])
    expect(w.find('[data-test="cr-emergency-alert"]').text()).toContain('approved within 24 hours of submission')
  })

  it('a request in order shows none', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const w = await open(request('approved'), ['safety_engineer'])
    expect(w.find('[data-test="cr-title"]').text()).toBe('Lower the heater outlet trip')
    expect(notices(w)).toEqual([])
  })
})

// The limit page lists the requests touching its limit under changeRequestKeys.limit (Pinia Colada). Every write on
// the request's page, not only the workflow steps, must make that list be asked again, or the limit page would show a
// request as it was before. The limit page's panel is mounted beside the request's page, as when both were visited.
describe("ChangeDetailView: every write fetches the limit page's change list again", () => {
  const LIMIT = { id: 5, tag: 'TSHH-101', siteId: FHR.id, status: 'active' as const, revision: 3 }
  const LimitPageAndRequest = defineComponent({
    props: { id: { type: String, required: true } },
    setup: (props) => () => h('div', [h(LimitChangesPanel, { limit: LIMIT }), h(ChangeDetailView, { id: props.id })]),
  })

  async function openBoth(cr: ChangeRequestDto, roles: Role[], writes: Routes) {
    const calls = answerApi({
      [`GET /change-requests/${cr.id}`]: () => ({ body: cr }),
      'GET /change-requests': (url) =>
        url.searchParams.get('limitId') === String(LIMIT.id)
          ? { body: { items: [], total: 0 } }
          : { status: 400, body: { error: { code: 'VALIDATION_FAILED', message: 'Not the limit page' } } },
      ...SITE_CHOICES,
      ...writes,
    })
    const w = await mountRecordPage(LimitPageAndRequest, cr.id, { id: ME, roles })
    const asked = (path: string) => calls.filter((c) => c.method === 'GET' && c.path === path).length
    return {
      w,
      calls,
      listAsked: () => asked('/change-requests'),
      recordAsked: () => asked(`/change-requests/${cr.id}`),
    }
  }

  it('ticking a checklist item', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const cr = request('submitted', { checklist: checklist(['training']) })
    const { w, calls, listAsked } = await openBoth(cr, ['safety_engineer'], {
      [`PUT /change-requests/${cr.id}/checklist/training`]: () => ({ body: { ...cr, checklist: checklist() } }),
    })
    expect(listAsked()).toBe(1)
    await w.find('[data-test="check-box-training"] input').setValue(true)
    await vi.waitFor(() => expect(listAsked()).toBe(2))
    expect(calls.some((c) => c.method === 'PUT' && c.path === `/change-requests/${cr.id}/checklist/training`)).toBe(
      true,
    )
  })

  it('uploading an attachment (the request is asked again too: the upload answers only the file)', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const { w, listAsked, recordAsked } = await openBoth(request('draft'), ['safety_engineer'], {})
    expect([listAsked(), recordAsked()]).toEqual([1, 1])
    w.findComponent(ChangeAttachments).vm.$emit('uploaded')
    await vi.waitFor(() => expect([listAsked(), recordAsked()]).toEqual([2, 2]))
  })

  it('signing a discipline review', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const cr = request('submitted', { reviewsRequired: ['operations'] })
    stubVisualViewport()
    const reviews: unknown[] = []
    const { w, listAsked } = await openBoth(cr, ['shift_supervisor'], {
      [`POST /change-requests/${cr.id}/reviews`]: (_url, init) => {
        reviews.push(JSON.parse(String(init?.body)))
        return { body: cr }
      },
    })
    expect(listAsked()).toBe(1)
    await w.find('[data-test="cr-review-sign-operations"]').trigger('click')
    await w.findComponent(AppSignDialog).props('sign')('signature-password', '')
    expect(reviews).toEqual([{ discipline: 'operations', password: 'signature-password', comment: '' }])
    await vi.waitFor(() => expect(listAsked()).toBe(2))
  })
})

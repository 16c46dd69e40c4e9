import { flushPromises } from '@vue/test-utils'
import { afterEach, describe, expect, it, vi } from 'vitest'
import type { AlarmState } from '@shared/schemas/alarms.ts'
import type { ShiftHandoverDto, ShiftHandoverState, ShiftHandoverStatus } from '@shared/schemas/shift-handover.ts'
import type { Role } from '@shared/schemas/users.ts'
import ShiftHandoverView from '@/features/shift-handover/views/ShiftHandoverView.vue'
import { answerApi, clickInDialog, FHR, mountView, stubVisualViewport, typeInDialog } from '../mount-view.ts'
import type { Routes } from '../mount-view.ts'

// The handover page builds "Hand over" and "Accept handover" from the shift-handover rule book
// (docs/shift-handover.md#rules) for the roles and states of its table, and signs what it shows.

const OUTGOING = 10
const INCOMING = 11
const AREA = { id: 3, name: 'Crude Unit' }
const snapshot = {
  site: { id: FHR.id, name: FHR.name, timeZone: FHR.timeZone },
  areas: [{ area: AREA, bypasses: [], degraded: [], overdueTests: [], temporaryChanges: [] }],
}
const STATE_HASH = 'a'.repeat(64)
const CONTENT_HASH = 'b'.repeat(64)

function handover(status: ShiftHandoverStatus, o: Partial<ShiftHandoverDto> = {}): ShiftHandoverDto {
  return {
    id: 5,
    siteId: FHR.id,
    areaIds: [AREA.id],
    status,
    notes: 'Feed pump P-12 on the spare; TI read hourly.',
    snapshot,
    stateHash: STATE_HASH,
    contentHash: CONTENT_HASH,
    handedOverBy: { id: OUTGOING, name: 'Hedda Marlowe' },
    handedOverAt: '2026-07-06T05:45:00.000Z',
    acceptedBy: null,
    acceptedAt: null,
    signatures: [],
    stateUnchanged: true,
    ...o,
  }
}

function stateWith(pending: ShiftHandoverDto[]): ShiftHandoverState {
  return {
    ...snapshot,
    asOf: '2026-07-06T06:00:00.000Z',
    stateHash: STATE_HASH,
    pending,
    recent: pending,
    actions: { handOver: { allowed: true } },
  }
}

async function open(roles: Role[], userId: number, pending: ShiftHandoverDto[], more: Routes = {}) {
  const calls = answerApi({
    ...more,
    'GET /shift-handovers/state': () => ({ body: stateWith(pending) }),
    'GET /sites': () => ({ body: { items: [FHR], total: 1 } }),
    'GET /areas': () => ({ body: { items: [{ ...AREA, siteId: FHR.id }], total: 1 } }),
    'POST /shift-handovers/5/acceptance': () => ({ body: handover('accepted') }),
  })
  const w = await mountView(ShiftHandoverView, {
    user: { id: userId, roles: roles.map((role) => ({ siteId: FHR.id, role })) },
    path: `/shift-handover?areaId=${AREA.id}`,
  })
  await flushPromises()
  return { w, calls }
}

const state = (w: Awaited<ReturnType<typeof open>>['w'], test: string) => {
  const btn = w.find(`[data-test="${test}"]`)
  if (!btn.exists()) return 'absent'
  return btn.attributes('disabled') === undefined ? 'enabled' : (btn.element.parentElement?.dataset.reason ?? '')
}

afterEach(() => vi.unstubAllGlobals())

describe('ShiftHandoverView: buttons follow the shift-handover rule book', () => {
  it.each<[string, Role[], number, ShiftHandoverStatus, boolean, string, string]>([
    // what, roles, user, pending handover's state, state unchanged, hand over, accept
    ['the incoming shift supervisor', ['shift_supervisor'], INCOMING, 'handed_over', true, 'enabled', 'enabled'],
    ['the outgoing one', ['shift_supervisor'], OUTGOING, 'handed_over', true, 'enabled', 'You handed this over'],
    ['an operator', ['operator'], INCOMING, 'handed_over', true, 'The outgoing shift supervisor', 'The incoming shift'],
    ['the plant manager', ['plant_manager'], INCOMING, 'handed_over', true, 'The outgoing shift', 'The incoming shift'],
    ['a changed state', ['shift_supervisor'], INCOMING, 'handed_over', false, 'enabled', 'changed since it was handed'],
  ])('%s', async (_what, roles, userId, status, unchanged, handOver, accept) => {
    const { w } = await open(roles, userId, [handover(status, { stateUnchanged: unchanged })])
    expect(w.find('[data-test="handover-pending-notes"]').text()).toBe('Feed pump P-12 on the spare; TI read hourly.')
    expect(state(w, 'handover-hand-over')).toContain(handOver)
    expect(state(w, 'handover-accept-5')).toContain(accept)
  })

  it('accepting signs the content hash that was shown', async () => {
    stubVisualViewport()
    const { w, calls } = await open(['shift_supervisor'], INCOMING, [handover('handed_over')])
    await w.find('[data-test="handover-accept-5"]').trigger('click')
    await flushPromises()
    const dialog = document.body.querySelector('[data-test="sign-dialog"]')
    expect(dialog?.textContent).toContain(CONTENT_HASH)
    typeInDialog('sign-password', 'limitkeeper-demo')
    clickInDialog('sign-confirm')
    await flushPromises()
    expect(calls.filter((c) => c.method === 'POST')).toEqual([
      {
        method: 'POST',
        path: '/shift-handovers/5/acceptance',
        body: { contentHash: CONTENT_HASH, password: 'limitkeeper-demo' },
      },
    ])
  })

  it('reminds of the alarm states past their time at the handover’s site, not at the user’s other sites', async () => {
    const overdue = (id: number, siteId: number, tag: string) =>
      ({
        id,
        siteId,
        tag,
        kind: 'shelved',
        status: 'active',
        until: '2026-07-06T04:00:00.000Z',
        overdue: true,
        startedBy: { id: 12, name: 'Olive Tanager' },
      }) as AlarmState
    const { w } = await open(['shift_supervisor'], INCOMING, [], {
      // the API's answer depends on the site asked for: all of the user's sites when none is named
      'GET /alarm-states': (url) => {
        const items = [overdue(1, FHR.id, 'LAH-150'), overdue(2, 2, 'SMP-XA-902')]
        const site = url.searchParams.get('siteId')
        const mine = site ? items.filter((i) => String(i.siteId) === site) : items
        return { body: { items: mine, total: mine.length } }
      },
    })
    const notice = w.find('[data-test="alarm-states-overdue"]')
    expect(notice.text()).toContain('LAH-150: shelved until')
    expect(notice.text()).not.toContain('SMP-XA-902')
  })
})

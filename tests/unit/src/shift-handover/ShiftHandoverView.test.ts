import { flushPromises } from '@vue/test-utils'
import { afterEach, describe, expect, it, vi } from 'vitest'
import type {
  HandoverAlarmState,
  ShiftHandoverDto,
  ShiftHandoverState,
  ShiftHandoverStatus,
} from '@shared/schemas/shift-handover.ts'
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
    'GET /shift-handovers/state': () => ({ body: stateWith(pending) }),
    'GET /sites': () => ({ body: { items: [FHR], total: 1 } }),
    'GET /areas': () => ({ body: { items: [{ ...AREA, siteId: FHR.id }], total: 1 } }),
    'POST /shift-handovers/5/acceptance': () => ({ body: handover('accepted') }),
    ...more,
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

  it('shows the alarm states in force by area, and those of tags of no area, past their time first', async () => {
    const alarm = (id: number, tag: string, overdue: boolean): HandoverAlarmState => ({
      id,
      tag,
      kind: id === 2 ? 'out_of_service' : 'shelved',
      reason: 'Transmitter being recalibrated',
      startedBy: 'Olive Tanager',
      until: overdue ? '2026-07-06T04:00:00.000Z' : '2026-07-06T09:00:00.000Z',
      overdue,
      signed: id === 2,
    })
    const withAlarms = (s: ShiftHandoverState): ShiftHandoverState => ({
      ...s,
      areas: [{ ...s.areas[0], alarmStates: [alarm(1, 'LAH-150', false), alarm(2, 'TAH-104', true)] }],
      alarmStatesWithoutArea: [alarm(3, 'FHR-XA-902', true)],
    })
    const { w } = await open(['shift_supervisor'], INCOMING, [], {
      'GET /shift-handovers/state': () => ({ body: withAlarms(stateWith([])) }),
    })
    const area = w.find(`[data-test="handover-area-${AREA.id}"] [data-test="handover-alarm-states"]`)
    // the one past its time first, marked; 04:00 UTC is 06:00 in Berlin (CEST, UTC+2, IANA tz database)
    expect(area.findAll('[data-test^="handover-alarm-state-"]').map((r) => r.attributes('data-test'))).toEqual([
      'handover-alarm-state-2',
      'handover-alarm-state-1',
    ])
    expect(area.find('[data-test="handover-alarm-state-2"]').text()).toContain(
      'TAH-104 · out of service (signed) by Olive Tanager · past its time since 6 Jul 2026, 06:00 CEST',
    )
    expect(area.find('[data-test="handover-alarm-state-1"]').text()).toContain('until 6 Jul 2026, 11:00 CEST')
    const count = w.find('[data-test="handover-count-alarms"]').text()
    expect(count).toContain('3')
    expect(count).toContain('2 past their time')
    const cards = w.findAll('[data-test="handover-alarm-states"]')
    expect(cards).toHaveLength(2)
    expect(cards[0].text()).toContain('Alarms of no area')
    expect(cards[0].text()).toContain('FHR-XA-902')
  })
})

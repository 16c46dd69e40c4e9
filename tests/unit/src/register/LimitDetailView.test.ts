import { afterEach, describe, expect, it, vi } from 'vitest'
import type { LimitStatus } from '@shared/domain/operating-window.ts'
import type { Role } from '@shared/schemas/users.ts'
import LimitDetailView from '@/features/register/views/LimitDetailView.vue'
import { answerApi, mountView } from '../mount-view.ts'
import { heaterTrip, registerRoutes, userWith } from './limit-fixture.ts'

// The limit page offers the buttons the register's rule book allows this user (docs/register.md#the-rule-book): a
// safety engineer edits and deletes a draft and proposes the change request that puts it in service, proposes the
// change request of an active limit; operators, technicians, control engineers and shift supervisors raise a change
// proposal about a limit that is not retired; a technician records a test of an active limit; a retired limit offers
// none of these. The expected buttons are written out by hand per state and role.

// the operating-window chart draws on a canvas, which happy-dom has not
vi.mock('@/features/register/components/LimitWindowChart.vue', () => ({ default: { render: () => null } }))

const BUTTONS = [
  'propose-change',
  'raise-proposal',
  'edit-limit',
  'delete-limit',
  'limit-propose-change',
  'limit-raise-proposal',
  'limit-record-test',
] as const
type Button = (typeof BUTTONS)[number]

// [status, roles, the buttons shown, the label of the change panel's button]
const TABLE: [LimitStatus, Role[], Button[], string | null][] = [
  [
    'proposed',
    ['safety_engineer'],
    ['edit-limit', 'delete-limit', 'limit-propose-change'],
    'Propose putting in service',
  ],
  ['proposed', ['operator'], ['raise-proposal', 'limit-raise-proposal'], null],
  ['proposed', ['technician'], ['raise-proposal', 'limit-raise-proposal'], null],
  ['active', ['safety_engineer'], ['propose-change', 'limit-propose-change'], 'Propose a change'],
  ['active', ['technician'], ['raise-proposal', 'limit-raise-proposal', 'limit-record-test'], null],
  ['active', ['shift_supervisor'], ['raise-proposal', 'limit-raise-proposal'], null],
  // one "Propose a change" in the header: the change request itself for whoever may propose it
  ['active', ['safety_engineer', 'operator'], ['propose-change', 'limit-propose-change', 'limit-raise-proposal'], null],
  ['active', ['auditor'], [], null],
  ['active', ['approver'], [], null],
  ['retired', ['safety_engineer'], [], null],
  ['retired', ['technician'], [], null],
]

describe('LimitDetailView', () => {
  afterEach(() => vi.unstubAllGlobals())

  it.each(TABLE)('limit %s, %j: shows %j', async (status, roles, shown, changeLabel) => {
    answerApi(registerRoutes(heaterTrip(status)))
    const w = await mountView(LimitDetailView, { user: userWith(roles), props: { id: '5' } })
    await vi.waitFor(() => expect(w.find('[data-test="limit-tag"]').text()).toBe('TSHH-101'))
    expect(BUTTONS.filter((b) => w.find(`[data-test="${b}"]`).exists())).toEqual(shown)
    // every button shown is enabled: the page offers an action only where the state and the role allow it
    for (const b of shown) expect(w.find(`[data-test="${b}"]`).classes(), b).not.toContain('v-btn--disabled')
    if (changeLabel) expect(w.find('[data-test="limit-propose-change"]').text()).toBe(changeLabel)
  })

  it('shows the test deferrals and reconciliation sections for an active limit only', async () => {
    answerApi(registerRoutes(heaterTrip('active')))
    const active = await mountView(LimitDetailView, { user: userWith(['technician']), props: { id: '5' } })
    await vi.waitFor(() => expect(active.find('[data-test="limit-tag"]').exists()).toBe(true))
    const activeText = active.text()
    vi.unstubAllGlobals()

    answerApi(registerRoutes(heaterTrip('proposed')))
    const draft = await mountView(LimitDetailView, { user: userWith(['technician']), props: { id: '5' } })
    await vi.waitFor(() => expect(draft.find('[data-test="limit-tag"]').exists()).toBe(true))
    for (const title of ['Test deferrals', 'Last reconciliation']) {
      expect(activeText, title).toContain(title)
      expect(draft.text(), title).not.toContain(title)
    }
  })
})

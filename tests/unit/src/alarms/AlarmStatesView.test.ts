import { flushPromises } from '@vue/test-utils'
import { afterEach, describe, expect, it, vi } from 'vitest'
import type { AlarmState } from '@shared/schemas/alarms.ts'
import type { Role } from '@shared/schemas/users.ts'
import AlarmStatesView from '@/features/alarms/views/AlarmStatesView.vue'
import {
  answerApi,
  at,
  clickInDialog,
  FHR,
  mountView,
  NOW,
  resetPage,
  ruleButtons,
  SITE_CHOICES,
  stubVisualViewport,
  typeInDialog,
} from '../mount-view.ts'

// The alarm-states page builds each row's "End" ("Return to service" for an out-of-service period) from the
// alarm-state rule book's answer carried on the row (docs/alarms.md, "Alarm states": who ends which state): shown
// unless the role forbids it, disabled with the reason where the state refuses it. The answers are written by hand
// from that table, as the server sends them to the user of each case. The form to record a state is for the roles
// that may start one (operator, shift supervisor, safety engineer). The clock is fixed at 12:00 UTC.

const ME = 7
const SHELVER = 30

type Actions = AlarmState['actions']
const ok: Actions = { end: { allowed: true } }
const forbidden = (reason: string): Actions => ({ end: { allowed: false, status: 403, reason } })

function state(id: number, kind: AlarmState['kind'], actions: Actions, o: Partial<AlarmState> = {}): AlarmState {
  return {
    id,
    siteId: FHR.id,
    limitId: null,
    tag: `TAH-${id}`,
    kind,
    status: 'active',
    reason: 'Instrument air dryer changeover',
    startedBy: { id: SHELVER, name: 'Ilse Brandvold' },
    startedAt: at(-1),
    until: at(3),
    overdue: false,
    signed: false,
    changeRequestId: null,
    endedBy: null,
    endedAt: null,
    endNote: null,
    actions,
    ...o,
  }
}

async function open(roles: Role[], items: AlarmState[]) {
  const calls = answerApi({
    ...SITE_CHOICES,
    'GET /alarm-states': () => ({ body: { items, total: items.length } }),
    'POST /alarm-states/1/end': () => ({ body: { ...items[0], status: 'ended' } }),
  })
  const w = await mountView(AlarmStatesView, {
    user: { id: ME, roles: roles.map((role) => ({ siteId: FHR.id, role })) },
  })
  return { w, calls }
}

const ends = (w: Awaited<ReturnType<typeof open>>['w'], ids: string[]) => ruleButtons(w, 'state-end', ids)

describe('AlarmStatesView: the rows follow the alarm-state rule book', () => {
  afterEach(resetPage)

  it.each<{ name: string; roles: Role[]; rows: AlarmState[]; expected: Record<string, true | string> }>([
    {
      name: 'the operator who shelved the alarm ends the shelving',
      roles: ['operator'],
      rows: [state(1, 'shelved', ok, { startedBy: { id: ME, name: 'Someone' } })],
      expected: { '1': true },
    },
    {
      name: 'another operator is not offered the end of someone else’s shelving',
      roles: ['operator'],
      rows: [
        state(1, 'shelved', forbidden('Only the operator who shelved the alarm or a shift supervisor unshelves it')),
      ],
      expected: {},
    },
    {
      name: 'a shift supervisor ends any shelving and an out-of-service period, not a suppression by design',
      roles: ['shift_supervisor'],
      rows: [
        state(1, 'shelved', ok),
        state(2, 'out_of_service', ok),
        state(3, 'suppressed', forbidden('Only a safety engineer ends a suppression by design')),
      ],
      expected: { '1': true, '2': true },
    },
    {
      name: 'a safety engineer ends a suppression by design',
      roles: ['safety_engineer'],
      rows: [
        state(3, 'suppressed', ok, { changeRequestId: 12 }),
        state(4, 'shelved', forbidden('Only the operator who shelved the alarm or a shift supervisor unshelves it')),
      ],
      expected: { '3': true },
    },
    {
      name: 'a technician records the return to service',
      roles: ['technician'],
      rows: [state(2, 'out_of_service', ok, { signed: true })],
      expected: { '2': true },
    },
    {
      name: 'an auditor reads every state and ends none',
      roles: ['auditor'],
      rows: [
        state(1, 'shelved', forbidden('Only the operator who shelved the alarm or a shift supervisor unshelves it')),
        state(
          2,
          'out_of_service',
          forbidden('A technician, operator or shift supervisor records the return to service'),
        ),
      ],
      expected: {},
    },
  ])('$name', async ({ roles, rows, expected }) => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const { w } = await open(roles, rows)
    expect(w.findAll('[data-test="state-list"] tbody tr')).toHaveLength(rows.length)
    expect(ends(w, ['1', '2', '3', '4'])).toEqual(expected)
  })

  it('an ended state offers nothing and says who ended it', async () => {
    const ended = state(
      1,
      'shelved',
      { end: { allowed: false, status: 409, reason: 'This state has already ended' } },
      {
        status: 'ended',
        endedBy: { id: SHELVER, name: 'Ilse Brandvold' },
        endedAt: at(-0.5),
        endNote: 'Dryer back on line',
      },
    )
    const { w } = await open(['shift_supervisor'], [ended])
    expect(ends(w, ['1'])).toEqual({})
    expect(w.find('[data-test="state-list"] tbody').text()).toContain('ended by Ilse Brandvold: Dryer back on line')
  })

  it('writes the times in the site’s time zone', async () => {
    // started 11:00 UTC, until 15:00 UTC; the refinery keeps Europe/Berlin, UTC+2 in July (CEST, IANA tz database)
    const { w } = await open(['operator'], [state(1, 'shelved', ok)])
    const cells = w.findAll('[data-test="state-list"] tbody td').map((c) => c.text())
    expect(cells).toContain('6 Jul 2026, 13:00')
    expect(cells).toContain('6 Jul 2026, 17:00')
  })

  it('labels the end of an out-of-service period as the return to service', async () => {
    const { w } = await open(['technician'], [state(2, 'out_of_service', ok)])
    expect(w.find('[data-test="state-end-2"]').text()).toBe('Return to service')
  })

  it.each<[Role, boolean]>([
    ['operator', true],
    ['shift_supervisor', true],
    ['safety_engineer', true],
    ['technician', false],
    ['auditor', false],
    ['plant_manager', false],
    ['approver', false],
  ])('the form to record a state, for a %s: %s', async (role, shown) => {
    const { w } = await open([role], [])
    expect(w.find('[data-test="state-form"]').exists()).toBe(shown)
  })

  it.each<[Role, string[]]>([
    ['operator', ['Shelved']],
    ['shift_supervisor', ['Shelved', 'Out of service']],
    ['safety_engineer', ['Suppressed by design']],
  ])('offers a %s the kinds of state the rule book lets the role start, the first chosen', async (role, titles) => {
    const { w } = await open([role], [])
    const select = w.findAllComponents({ name: 'VSelect' }).find((c) => c.attributes('data-test') === 'state-kind')!
    expect((select.props('items') as { title: string }[]).map((i) => i.title)).toEqual(titles)
    expect(select.text()).toContain(titles[0])
  })

  it('ends a state with the record written in the dialog', async () => {
    const { w, calls } = await open(['operator'], [state(1, 'shelved', ok, { startedBy: { id: ME, name: 'Someone' } })])
    stubVisualViewport()
    await w.find('[data-test="state-end-1"]').trigger('click')
    await flushPromises()
    typeInDialog('state-end-note', 'Dryer back on line, alarm returned to normal')
    await flushPromises()
    clickInDialog('state-end-save')
    await flushPromises()
    expect(calls.filter((c) => c.method === 'POST')).toEqual([
      { method: 'POST', path: '/alarm-states/1/end', body: { note: 'Dryer back on line, alarm returned to normal' } },
    ])
    // the list is asked again after the end
    expect(calls.filter((c) => c.method === 'GET' && c.path === '/alarm-states')).toHaveLength(2)
  })
})

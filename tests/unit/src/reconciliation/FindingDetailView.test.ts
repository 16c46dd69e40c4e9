import { flushPromises } from '@vue/test-utils'
import { afterEach, describe, expect, it, vi } from 'vitest'
import { createAppAbility, defineRulesFor } from '@shared/abilities/index.ts'
import { findingVerdicts } from '@shared/domain/rules/findings.ts'
import type { Finding, FindingState } from '@shared/schemas/reconciliation.ts'
import type { Role, RoleAssignment } from '@shared/schemas/users.ts'
import FindingDetailView from '@/features/reconciliation/views/FindingDetailView.vue'
import { onSite } from '@/features/register/site-subject'
import {
  answerApi,
  at,
  clickInDialog,
  FHR,
  mountRecordPage,
  mountView,
  NOW,
  type Routes,
  SITE_CHOICES,
  stubVisualViewport,
  typeInDialog,
} from '../mount-view.ts'

// The finding page builds its buttons from the findings rule book (docs/reconciliation.md#findings): a safety
// engineer of the site acknowledges, then links a change request or accepts; the plant manager may also accept; a
// role that may not act sees no button, a state that refuses an action shows it disabled with the reason. The
// expectations below are that section's words, written out. The page shows the answers the server sends with the
// finding; the fixture makes them as the findings service does, from the rule book and the user's roles. The clock is
// fixed at 12:00 UTC.

const atFhr = (roles: Role[]): RoleAssignment[] => roles.map((role) => ({ siteId: FHR.id, role }))

/** The rule book's answers the server sends with the finding to a user holding these roles. */
function answersFor(f: Finding, roles: RoleAssignment[]): Finding['actions'] {
  const ability = createAppAbility(defineRulesFor({ id: 7, roles }))
  const finding = onSite('Finding', f.siteId)
  return findingVerdicts(f, {
    isSafetyEngineer: ability.can('update', finding),
    mayAccept: ability.can('accept', finding),
  })
}

function finding(state: FindingState, o: Partial<Finding> = {}, roles = atFhr(['safety_engineer'])): Finding {
  const closed = state === 'resolved' || state === 'accepted'
  const f: Finding = {
    id: 42,
    siteId: FHR.id,
    sourceId: 9,
    sourceName: 'Heater H-101 controller',
    sourceKind: 'modbus',
    limitId: 5,
    tag: 'TSHH-103',
    attribute: 'setpoint',
    kind: 'changed_without_moc',
    state,
    registerValue: '900',
    deviceValue: '910',
    unit: '°C',
    detail: '',
    present: state !== 'resolved',
    firstSeenAt: at(-30),
    lastSeenAt: at(-1),
    openedAt: at(-30),
    reopenCount: 0,
    acknowledgedBy: state === 'open' ? null : 'Rowan Pike',
    acknowledgedAt: state === 'open' ? null : at(-20),
    changeRequestId: null,
    resolution: state === 'resolved' ? 'device_corrected' : null,
    resolvedBy: state === 'accepted' ? 'Rowan Pike' : null,
    resolvedAt: closed ? at(-2) : null,
    acceptReason: state === 'accepted' ? 'Raised under the furnace campaign procedure' : null,
    signatures: [],
    version: 3,
    actions: { acknowledge: { allowed: true }, linkChange: { allowed: true }, accept: { allowed: true } },
    ...o,
  }
  return { ...f, actions: answersFor(f, roles) }
}

function api(f: Finding, more: Routes = {}) {
  return answerApi({
    [`GET /findings/${f.id}`]: () => ({ body: f }),
    ...SITE_CHOICES,
    ...more,
  })
}

async function open(f: Finding, roles: Role[]) {
  return mountRecordPage(FindingDetailView, f.id, { id: 7, roles })
}

type Wrapper = Awaited<ReturnType<typeof open>>
const BUTTONS = ['acknowledge', 'link-change', 'accept'] as const
/** Each button shown: enabled, or the reason it is disabled. */
function buttons(w: Wrapper) {
  const out: Record<string, true | string> = {}
  for (const name of BUTTONS) {
    const btn = w.find(`[data-test="finding-${name}"]`)
    if (!btn.exists()) continue
    out[name] = btn.attributes('disabled') === undefined ? true : (btn.element.parentElement?.dataset.reason ?? '')
  }
  return out
}

// the reasons of docs/reconciliation.md#findings as the page words them
const ACK_FIRST_LINK = 'Acknowledge the finding first: somebody owns it before it is resolved.'
const ACK_FIRST_ACCEPT = 'Acknowledge the finding first: somebody owns it before it is accepted.'
const closedReason = (s: string) =>
  `The finding is ${s}; it reopens by itself if a later reconciliation sees the difference again.`

afterEach(() => {
  vi.useRealTimers()
  vi.unstubAllGlobals()
})

describe('FindingDetailView: buttons follow the findings rule book', () => {
  it.each<[string, FindingState, Role[], Record<string, true | string>]>([
    [
      'a safety engineer acknowledges an open finding; closing waits for it',
      'open',
      ['safety_engineer'],
      { acknowledge: true, 'link-change': ACK_FIRST_LINK, accept: ACK_FIRST_ACCEPT },
    ],
    ['the plant manager may accept, once acknowledged', 'open', ['plant_manager'], { accept: ACK_FIRST_ACCEPT }],
    ['an operator sees no button', 'open', ['operator'], {}],
    [
      'a safety engineer closes an acknowledged finding by a change request or by accepting it',
      'acknowledged',
      ['safety_engineer'],
      { acknowledge: 'The finding is already acknowledged.', 'link-change': true, accept: true },
    ],
    ['the plant manager accepts an acknowledged finding', 'acknowledged', ['plant_manager'], { accept: true }],
    ['an operator sees no button on an acknowledged finding', 'acknowledged', ['operator'], {}],
    [
      'nothing is left to do on a resolved finding',
      'resolved',
      ['safety_engineer'],
      {
        acknowledge: closedReason('resolved'),
        'link-change': closedReason('resolved'),
        accept: closedReason('resolved'),
      },
    ],
    [
      'the plant manager sees accept refused on a resolved finding',
      'resolved',
      ['plant_manager'],
      { accept: closedReason('resolved') },
    ],
    [
      'nothing is left to do on an accepted finding',
      'accepted',
      ['safety_engineer'],
      {
        acknowledge: closedReason('accepted'),
        'link-change': closedReason('accepted'),
        accept: closedReason('accepted'),
      },
    ],
    ['an operator sees no button on an accepted finding', 'accepted', ['operator'], {}],
    ['an auditor reads only', 'acknowledged', ['auditor'], {}],
    ['a technician reads only', 'open', ['technician'], {}],
  ])('%s (%s, %j)', async (_what, state, roles, expected) => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const f = finding(state, {}, atFhr(roles))
    api(f)
    const w = await open(f, roles)
    expect(w.find('[data-test="finding-device-value"]').text()).toBe('910 °C')
    expect(buttons(w)).toEqual(expected)
  })

  it('an unreachable source is not resolved by a change request; it may still be accepted', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const f = finding('acknowledged', { kind: 'unreachable', attribute: 'setpoint', deviceValue: null })
    api(f)
    expect(buttons(await open(f, ['safety_engineer']))).toEqual({
      acknowledge: 'The finding is already acknowledged.',
      'link-change': 'An unreachable source is resolved by the next run that reads it, not by a change request.',
      accept: true,
    })
  })

  it('the roles of another site give no button', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const elsewhere: RoleAssignment[] = [{ siteId: 2, role: 'safety_engineer' }]
    const f = finding('acknowledged', {}, elsewhere)
    api(f)
    const w = await mountView(FindingDetailView, {
      user: { id: 7, roles: elsewhere },
      props: { id: String(f.id) },
    })
    expect(buttons(w)).toEqual({})
  })
})

describe('FindingDetailView: what the actions send', () => {
  it('Acknowledge posts the version read and shows the acknowledged finding', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const before = finding('open')
    const after = finding('acknowledged', { version: 4 })
    let acknowledged = false
    const calls = api(before, {
      [`GET /findings/${before.id}`]: () => ({ body: acknowledged ? after : before }),
      [`POST /findings/${before.id}/acknowledgement`]: () => {
        acknowledged = true
        return { body: after }
      },
    })
    const w = await open(before, ['safety_engineer'])
    await w.find('[data-test="finding-acknowledge"]').trigger('click')
    await flushPromises()
    expect(calls.filter((c) => c.method !== 'GET')).toEqual([
      { method: 'POST', path: '/findings/42/acknowledgement', body: { version: 3 } },
    ])
    expect(buttons(w)).toEqual({
      acknowledge: 'The finding is already acknowledged.',
      'link-change': true,
      accept: true,
    })
  })

  it('Accept signs the difference with the reason and the password, and sends them with the version read', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    stubVisualViewport()
    const f = finding('acknowledged', {}, atFhr(['plant_manager']))
    const calls = api(f, {
      [`POST /findings/${f.id}/acceptance`]: () => ({ body: finding('accepted', { version: 4 }) }),
    })
    const w = await open(f, ['plant_manager'])
    await w.find('[data-test="finding-accept"]').trigger('click')
    await flushPromises()
    expect(document.body.querySelector('[data-test="sign-meaning"]')?.textContent).toContain(
      'TSHH-103 (setpoint) stays as the source holds it (910 °C) while the register says 900 °C',
    )
    typeInDialog('accept-reason', 'Raised under the furnace campaign procedure')
    typeInDialog('sign-password', 'limitkeeper-demo')
    await flushPromises()
    clickInDialog('sign-confirm')
    await flushPromises()
    expect(calls.filter((c) => c.method !== 'GET')).toEqual([
      {
        method: 'POST',
        path: '/findings/42/acceptance',
        body: { version: 3, reason: 'Raised under the furnace campaign procedure', password: 'limitkeeper-demo' },
      },
    ])
  })

  it('for a live device, "Reconcile now" starts a run of its source and nothing else: the page only reads', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const f = finding('acknowledged')
    const calls = api(f, {
      'POST /reconciliation-sources/9/runs': () => ({
        body: { outcome: 'completed', differences: 1, findingsResolved: 0, error: null },
      }),
    })
    const w = await open(f, ['safety_engineer'])
    const run = w.find('[data-test="finding-run-source"]')
    expect(run.text()).toBe('Reconcile Heater H-101 controller now')
    await run.trigger('click')
    await flushPromises()
    // a run reads the device (docs/reconciliation.md#never-a-write); no request names a device register or value
    expect(calls.filter((c) => c.method !== 'GET')).toEqual([
      { method: 'POST', path: '/reconciliation-sources/9/runs', body: {} },
    ])
    expect(w.text()).not.toMatch(/write to (the )?device|set on (the )?device/i)
    expect(w.find('[data-test="recon-caution"]').text()).toContain('Limitkeeper only reads')
  })

  it.each<[string, FindingState, Role[], Partial<Finding>]>([
    ['an operator', 'acknowledged', ['operator'], {}],
    ['the plant manager', 'acknowledged', ['plant_manager'], {}],
    ['anyone, on a resolved finding', 'resolved', ['safety_engineer'], {}],
    ['anyone, on an export source', 'acknowledged', ['safety_engineer'], { sourceKind: 'export' }],
  ])('"Reconcile now" is not offered to %s', async (_who, state, roles, o) => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const f = finding(state, o, atFhr(roles))
    api(f)
    const w = await open(f, roles)
    expect(w.find('[data-test="finding-device-value"]').exists()).toBe(true)
    expect(w.find('[data-test="finding-run-source"]').exists()).toBe(false)
  })
})

import { flushPromises } from '@vue/test-utils'
import { afterEach, describe, expect, it, vi } from 'vitest'
import type { DemandDto } from '@shared/schemas/demands.ts'
import type { Role } from '@shared/schemas/users.ts'
import AppSignDialog from '@/components/AppSignDialog.vue'
import DemandDetailView from '@/features/demands/views/DemandDetailView.vue'
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

// The event page builds "Classify" and "Credit as proof test" from the demand rule book's answers carried on the
// event (docs/demands.md, "Who does what" and "Screens"): a button is shown unless the role forbids it, and disabled
// with the reason where the event's state or the site policy refuses it. The answers below are written by hand from
// that section, as the server sends them to the user of each case. The clock is fixed at 12:00 UTC.

const ME = 7

type Actions = DemandDto['actions']
const ok = { allowed: true } as const
const forbidden = (reason: string) => ({ allowed: false, status: 403, reason }) as const
const refused = (reason: string) => ({ allowed: false, status: 409, reason }) as const

const NOT_AN_ENGINEER: Actions = {
  classify: forbidden('Safety engineers of the site classify demands and trips'),
  credit: forbidden('Safety engineers of the site credit a demand as a proof test'),
}
const CLASSIFIED = 'This event is already classified'
const CLASSIFY_FIRST = 'Classify the demand as a genuine demand before crediting it'
const POLICY_OFF = 'The site policy does not allow crediting a demand as a proof test'
const NOT_ACTED = 'Only a real demand on which the function acted can be credited as a proof test'
const NOT_WHOLE = 'The demand did not exercise the whole function (sensor to final element); it cannot count as a test'
const CREDITED = 'This demand is already credited as a proof test'

/** A real demand on the heater trip TSHH-101 on which the function acted, recorded and not yet classified. */
function demand(o: Partial<DemandDto> = {}): DemandDto {
  return {
    id: 42,
    siteId: FHR.id,
    siteCode: 'FHR',
    limitId: 5,
    limitTag: 'TSHH-101',
    instrumentId: null,
    instrumentTag: null,
    kind: 'real_demand',
    outcome: 'acted',
    occurredAt: '2026-07-05T03:40:00.000Z',
    description: 'Heater H-101 outlet reached the trip on a fuel-gas surge; the burners shut off',
    cause: '',
    evidence: 'Sequence-of-events print 2026-07-05',
    workOrder: 'WO-4410',
    wholeFunction: true,
    status: 'recorded',
    counts: null,
    dangerousUndetected: null,
    classificationNote: '',
    classifiedBy: null,
    classifiedAt: null,
    creditedAsTest: false,
    creditNote: '',
    creditedBy: null,
    creditedAt: null,
    imported: false,
    recordedBy: 'Olive Tanager',
    createdAt: '2026-07-05T04:00:00.000Z',
    actions: NOT_AN_ENGINEER,
    ...o,
  }
}
/** The same demand classified by a safety engineer as counting in the rates. */
const classified = (o: Partial<DemandDto> = {}) =>
  demand({
    status: 'classified',
    counts: true,
    classificationNote: 'A genuine demand from the fuel-gas surge',
    classifiedBy: 'Ida Marlow',
    classifiedAt: '2026-07-06T08:00:00.000Z',
    ...o,
  })

const open = (d: DemandDto, roles: Role[], more: Routes = {}) =>
  openRecordPage(DemandDetailView, `/demands/${d.id}`, d, { id: ME, roles }, more)

type Wrapper = Awaited<ReturnType<typeof open>>['w']
/** Each button shown: enabled, or the reason it is disabled. */
const buttons = (w: Wrapper) => ruleButtons(w, 'demand', ['classify', 'credit'])

afterEach(resetPage)

describe('DemandDetailView: buttons follow the demand rule book', () => {
  it.each<[string, DemandDto, Role[], Record<string, true | string>]>([
    [
      'a safety engineer classifies a recorded demand; crediting waits for the classification',
      demand({ actions: { classify: ok, credit: refused(CLASSIFY_FIRST) } }),
      ['safety_engineer'],
      { classify: true, credit: CLASSIFY_FIRST },
    ],
    [
      'a safety engineer credits a classified genuine demand that acted on the whole function (policy on)',
      classified({ actions: { classify: refused(CLASSIFIED), credit: ok } }),
      ['safety_engineer'],
      { classify: CLASSIFIED, credit: true },
    ],
    [
      'with the site policy off (the default) a demand is not credited',
      classified({ actions: { classify: refused(CLASSIFIED), credit: refused(POLICY_OFF) } }),
      ['safety_engineer'],
      { classify: CLASSIFIED, credit: POLICY_OFF },
    ],
    [
      'a spurious trip is classified but never credited',
      demand({
        kind: 'spurious_trip',
        outcome: null,
        cause: 'Loose terminal on TT-101A',
        actions: { classify: ok, credit: refused(NOT_ACTED) },
      }),
      ['safety_engineer'],
      { classify: true, credit: NOT_ACTED },
    ],
    [
      'a demand on which the function failed to act is never credited',
      classified({ outcome: 'failed_to_act', actions: { classify: refused(CLASSIFIED), credit: refused(NOT_ACTED) } }),
      ['safety_engineer'],
      { classify: CLASSIFIED, credit: NOT_ACTED },
    ],
    [
      'a demand that did not exercise the whole function is not credited',
      classified({ wholeFunction: false, actions: { classify: refused(CLASSIFIED), credit: refused(NOT_WHOLE) } }),
      ['safety_engineer'],
      { classify: CLASSIFIED, credit: NOT_WHOLE },
    ],
    [
      'a demand is credited once',
      classified({
        creditedAsTest: true,
        creditNote: 'Burners shut off within 2 s; SOE print checked',
        creditedBy: 'Ida Marlow',
        creditedAt: '2026-07-06T09:00:00.000Z',
        actions: { classify: refused(CLASSIFIED), credit: refused(CREDITED) },
      }),
      ['safety_engineer'],
      { classify: CLASSIFIED, credit: CREDITED },
    ],
    ['an operator records events but does not classify or credit them', demand(), ['operator'], {}],
    ['a shift supervisor records events but does not classify or credit them', demand(), ['shift_supervisor'], {}],
    ['a technician reads only', classified(), ['technician'], {}],
    ['an auditor reads only', classified(), ['auditor'], {}],
  ])('%s', async (_what, d, roles, expected) => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const { w } = await open(d, roles)
    expect(w.find('[data-test="demand-description-text"]').text()).toBe(
      'Heater H-101 outlet reached the trip on a fuel-gas surge; the burners shut off',
    )
    expect(buttons(w)).toEqual(expected)
  })
})

describe('DemandDetailView: what the actions send', () => {
  it('"Classify" on a failure sends counts, dangerous undetected and the note, then shows the classification', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const failure = demand({
      kind: 'dangerous_failure',
      outcome: null,
      wholeFunction: false,
      actions: { classify: ok, credit: refused(NOT_ACTED) },
    })
    const note = 'TT-101B read 40 °C low against the other two channels'
    const { w, calls } = await open(failure, ['safety_engineer'], {
      'POST /demands/42/classification': () => ({
        body: {
          ...failure,
          status: 'classified',
          counts: true,
          dangerousUndetected: true,
          classificationNote: note,
          classifiedBy: 'Ida Marlow',
          classifiedAt: NOW.toISOString(),
          actions: { classify: refused(CLASSIFIED), credit: refused(NOT_ACTED) },
        },
      }),
    })
    await openDialog(w, 'demand-classify')
    typeInDialog('classify-note', note)
    clickInDialog('classify-confirm')
    await vi.waitFor(() => expect(w.find('[data-test="demand-classification"]').exists()).toBe(true))

    expect(calls.filter((c) => c.method === 'POST')).toEqual([
      {
        method: 'POST',
        path: '/demands/42/classification',
        body: { counts: true, dangerousUndetected: true, note },
      },
    ])
    expect(w.find('[data-test="demand-review"]').text()).toBe('Counts')
    expect(buttons(w)).toEqual({ classify: CLASSIFIED, credit: NOT_ACTED })
  })

  it('"Credit as proof test" sends the password, the confirmation and the note', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const d = classified({ actions: { classify: refused(CLASSIFIED), credit: ok } })
    const note = 'Burners shut off within 2 s; SOE print checked'
    const { w, calls } = await open(d, ['safety_engineer'], {
      'POST /demands/42/credit': () => ({
        body: {
          ...d,
          creditedAsTest: true,
          creditNote: note,
          creditedBy: 'Ida Marlow',
          creditedAt: NOW.toISOString(),
          actions: { classify: refused(CLASSIFIED), credit: refused(CREDITED) },
        },
      }),
    })
    await openDialog(w, 'demand-credit')
    typeInDialog('credit-note', note)
    document.body.querySelector<HTMLInputElement>('[data-test="credit-covered"] input')!.click()
    await flushPromises()
    await w.findComponent(AppSignDialog).props('sign')('my password', '')
    await flushPromises()

    expect(calls.filter((c) => c.method === 'POST')).toEqual([
      {
        method: 'POST',
        path: '/demands/42/credit',
        body: { password: 'my password', coveredWhatTheTestCovers: true, note },
      },
    ])
    expect(w.find('[data-test="demand-credit-text"]').text()).toContain(note)
    expect(buttons(w)).toEqual({ classify: CLASSIFIED, credit: CREDITED })
  })
})

import { afterEach, describe, expect, it, vi } from 'vitest'
import type { BypassDto, BypassStatus } from '@shared/schemas/bypasses.ts'
import type { Role } from '@shared/schemas/users.ts'
import BypassDetailView from '@/features/bypasses/views/BypassDetailView.vue'
import {
  SITE_CHOICES,
  mountRecordPage,
  answerApi,
  at,
  FHR,
  NOW,
  openDialog,
  resetPage,
  ruleButtons,
  typeInDialog,
} from '../mount-view.ts'

// The bypass page builds its buttons from the bypass rule book (docs/bypasses.md#rules): which are shown, which are
// disabled and why, for the roles and states of the rule book's table. The clock is fixed at 12:00 UTC.

const ME = 7
const REQUESTER = 100

function bypass(status: BypassStatus, o: Partial<BypassDto> = {}): BypassDto {
  const started = status === 'active'
  return {
    id: 42,
    limitId: 5,
    limitTag: 'TSHH-101',
    limitClass: 'trip',
    sil: 2,
    limitMaxBypassHours: null,
    siteId: FHR.id,
    siteCode: 'FHR',
    timeZone: 'Europe/Berlin',
    areaId: 1,
    areaName: 'Crude Unit',
    processName: 'Heater H-101',
    channelInstrumentId: null,
    channelTag: null,
    requestedById: REQUESTER,
    requestedBy: 'Olive Tanager',
    reason: 'Burner tile repair',
    compensatingMeasures: ['Field operator watches TI-101 every 15 min'],
    plannedStart: at(-2),
    plannedEnd: at(4),
    plannedHours: 6,
    status,
    overdue: false,
    overdueHours: 0,
    changeRequestId: null,
    authorizedAt: status === 'requested' ? null : at(-3),
    activatedAt: started ? at(-2) : null,
    activatedBy: started ? 'Olive Tanager' : null,
    removedAt: null,
    removedBy: null,
    pvClearConfirmed: null,
    removalNote: null,
    lapsesAt: null,
    bypassedHours: started ? 2 : 0,
    authorizations: [],
    createdAt: at(-4),
    source: 'recorded',
    asOf: NOW.toISOString(),
    ...o,
  }
}

async function open(b: BypassDto, roles: Role[], userId = ME) {
  answerApi({
    [`GET /bypasses/${b.id}`]: () => ({ body: b }),
    ...SITE_CHOICES,
  })
  return mountRecordPage(BypassDetailView, b.id, { id: userId, roles })
}

type Wrapper = Awaited<ReturnType<typeof open>>
const BUTTONS = ['authorize', 'reject', 'extend', 'activate', 'remove', 'cancel'] as const
/** Each button shown: enabled, or the reason it is disabled. */
const buttons = (w: Wrapper) => ruleButtons(w, 'bypass', BUTTONS)

afterEach(() => {
  vi.useRealTimers()
  vi.unstubAllGlobals()
})

describe('BypassDetailView: buttons follow the bypass rule book', () => {
  it.each<[string, BypassStatus, Role[], number, Record<string, true>]>([
    [
      'a shift supervisor decides on a request',
      'requested',
      ['shift_supervisor'],
      ME,
      { authorize: true, reject: true, cancel: true },
    ],
    [
      'the plant manager decides on a request',
      'requested',
      ['plant_manager'],
      ME,
      { authorize: true, reject: true, cancel: true },
    ],
    ['an operator sees no decision on a request', 'requested', ['operator'], ME, {}],
    ['the operator who asked may cancel it', 'requested', ['operator'], REQUESTER, { cancel: true }],
    ['an operator puts an authorized bypass in force', 'authorized', ['operator'], ME, { activate: true }],
    [
      'a shift supervisor may also extend or cancel it',
      'authorized',
      ['shift_supervisor'],
      ME,
      { extend: true, activate: true, cancel: true },
    ],
    ['a technician removes an active bypass', 'active', ['technician'], ME, { remove: true }],
    ['an auditor reads only', 'active', ['auditor'], ME, {}],
    ['nothing is left to do on a removed bypass', 'removed', ['shift_supervisor', 'plant_manager'], ME, {}],
    // the rest of the table of docs/bypasses.md#rules
    [
      'an approver decides on a request',
      'requested',
      ['approver'],
      ME,
      { authorize: true, reject: true, cancel: true },
    ],
    [
      'a shift supervisor extends or removes an active bypass',
      'active',
      ['shift_supervisor'],
      ME,
      { extend: true, remove: true },
    ],
    ['an operator removes an active bypass', 'active', ['operator'], ME, { remove: true }],
    ['a safety engineer who did not ask has nothing to do on a request', 'requested', ['safety_engineer'], ME, {}],
    ['nothing is left to do on a rejected request', 'rejected', ['shift_supervisor', 'operator'], ME, {}],
    ['nothing is left to do on a cancelled request', 'cancelled', ['shift_supervisor', 'operator'], ME, {}],
    ['nothing is left to do on a lapsed authorization', 'lapsed', ['shift_supervisor', 'operator'], ME, {}],
  ])('%s (%s, %j)', async (_what, status, roles, userId, expected) => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const w = await open(
      bypass(status, status === 'removed' ? { removedAt: at(-1), activatedAt: at(-3) } : {}),
      roles,
      userId,
    )
    expect(w.find('[data-test="bypass-reason-text"]').text()).toBe('Burner tile repair')
    expect(buttons(w)).toEqual(expected)
  })

  it('before its planned start "Put in force" is shown disabled, with the time it may be put in force', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const w = await open(bypass('authorized', { plannedStart: at(3), plannedEnd: at(7), authorizedAt: at(-1) }), [
      'operator',
    ])
    const b = buttons(w)
    expect(b.activate).toContain('cannot be put in force before its planned start')
    // 15:00 UTC is 17:00 in Berlin in July
    expect(b.activate).toContain('17:00')
  })

  it('the requester who is a shift supervisor sees "Authorize" disabled: nobody authorizes their own request', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const w = await open(bypass('requested'), ['shift_supervisor'], REQUESTER)
    expect(buttons(w)).toEqual({
      authorize: 'Nobody authorizes their own bypass request',
      reject: 'Nobody decides on their own bypass request',
      cancel: true,
    })
  })

  it('the hour limits: a 20 h request is beyond a shift supervisor, within the plant manager', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const long = bypass('requested', { plannedStart: at(1), plannedEnd: at(21), plannedHours: 20 })
    expect((await open(long, ['shift_supervisor'])).find('[data-test="bypass-authorize"]').attributes('disabled')).toBe(
      '',
    )
    vi.unstubAllGlobals()
    expect(buttons(await open(long, ['plant_manager'])).authorize).toBe(true)
  })

  it('with a linked temporary change the plant manager may authorize beyond 72 h; the supervisor still not', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const linked = bypass('requested', {
      plannedStart: at(1),
      plannedEnd: at(101),
      plannedHours: 100,
      changeRequestId: 9,
    })
    expect(buttons(await open(linked, ['plant_manager'])).authorize).toBe(true)
    vi.unstubAllGlobals()
    expect(buttons(await open(linked, ['shift_supervisor'])).authorize).toContain('12 h')
  })

  it('an active bypass at 12 h in all since it was put in force cannot be extended by a shift supervisor', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const full = bypass('active', { plannedStart: at(-2), activatedAt: at(-2), plannedEnd: at(10), plannedHours: 12 })
    const b = buttons(await open(full, ['shift_supervisor']))
    expect(b.remove).toBe(true)
    expect(b.extend).toContain('plant manager')
    vi.unstubAllGlobals()
    expect(buttons(await open(full, ['plant_manager'])).extend).toBe(true)
  })
})

describe('BypassDetailView: the removal dialog', () => {
  afterEach(resetPage)

  // docs/api.md, POST /api/bypasses/:id/removal: both confirmations are required, the note is optional; a refusal
  // shows the API's messages at the field they name
  it('removes only with both confirmations ticked, sends the note trimmed and shows a refusal at the note', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const b = bypass('active')
    const calls = answerApi({
      [`GET /bypasses/${b.id}`]: () => ({ body: b }),
      [`POST /bypasses/${b.id}/removal`]: () => ({
        status: 400,
        body: {
          error: {
            code: 'VALIDATION_FAILED',
            message: 'Some fields are not valid',
            details: { fields: { note: ['At most 2000 characters'] } },
          },
        },
      }),
      ...SITE_CHOICES,
    })
    const w = await mountRecordPage(BypassDetailView, b.id, { id: ME, roles: ['technician'] })
    await openDialog(w, 'bypass-remove')
    const confirm = () => document.body.querySelector<HTMLButtonElement>('[data-test="remove-confirm"]')!
    expect(confirm().disabled).toBe(true)

    document.body.querySelector<HTMLInputElement>('[data-test="confirm-pv-clear"] input')!.click()
    document.body.querySelector<HTMLInputElement>('[data-test="confirm-protection-restored"] input')!.click()
    typeInDialog('remove-note', '  Valve stroked closed and back  ')
    await vi.waitFor(() => expect(confirm().disabled).toBe(false))

    confirm().click()
    await vi.waitFor(() =>
      expect(document.body.querySelector('[data-test="remove-note"]')!.textContent).toContain(
        'At most 2000 characters',
      ),
    )
    expect(calls.filter((c) => c.method === 'POST')).toEqual([
      {
        method: 'POST',
        path: `/bypasses/${b.id}/removal`,
        body: { pvClearConfirmed: true, protectionRestoredConfirmed: true, note: 'Valve stroked closed and back' },
      },
    ])
    expect(document.body.textContent).toContain('Some fields are not valid')
  })
})

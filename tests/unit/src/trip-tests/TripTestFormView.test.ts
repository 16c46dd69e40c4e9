import { flushPromises } from '@vue/test-utils'
import { afterEach, describe, expect, it, vi } from 'vitest'
import type { Role } from '@shared/schemas/users.ts'
import TripTestFormView from '@/features/trip-tests/views/TripTestFormView.vue'
import { heaterTrip, registerRoutes, userWith } from '../register/limit-fixture.ts'
import { answerApi, FHR, mountView } from '../mount-view.ts'
import { type Meaning, ME, RECORDER, record } from './trip-test-fixture.ts'

// The trip-test form (docs/trip-tests.md) checks the record with the schema the server parses (TripTestFormSchema in
// shared/schemas/trip-tests.ts) before it sends anything, and sends the numbers as they were typed, read as numbers.
// Its save button follows the rule book: a technician of the site records a test of an active limit, an operator
// does not (docs/register.md#the-rule-book). The heater trip is on a type K thermocouple without a head transmitter,
// so its as-found reading in signal units is in mV. The expected messages are the schema's own sentences.

// 12:00 on the test day at Fernhollow (Europe/Berlin, summer time): the form's default time of the test
const NOW = new Date('2026-07-06T10:00:00.000Z')

afterEach(() => {
  vi.useRealTimers()
  vi.unstubAllGlobals()
})

async function open(roles: Role[], correct?: { signedAs: [Meaning, number][]; userId: number }) {
  vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
  const limit = heaterTrip('active')
  const t = correct && record(correct.signedAs, roles, correct.userId)
  const calls = answerApi({
    ...registerRoutes(limit),
    'POST /trip-tests': () => ({ status: 201, body: { id: 31, limitTag: limit.tag } }),
    ...(t ? { [`GET /trip-tests/${t.id}`]: () => ({ body: t }) } : {}),
  })
  const w = await mountView(TripTestFormView, {
    user: correct ? { id: correct.userId, roles: roles.map((role) => ({ siteId: FHR.id, role })) } : userWith(roles),
    ...(t ? { props: { id: String(t.id) }, path: `/tests/${t.id}/edit` } : { path: `/tests/new?limitId=${limit.id}` }),
  })
  await vi.waitFor(() => expect(w.find('[data-test="section-results"]').exists()).toBe(true))
  return { w, writes: () => calls.filter((c) => c.method !== 'GET') }
}
type Wrapper = Awaited<ReturnType<typeof open>>['w']
const at = (w: Wrapper, test: string) => w.find(`[data-test="${test}"]`)
const messages = (w: Wrapper, test: string) =>
  at(w, test)
    .findAll('.v-messages__message')
    .map((m) => m.text())
async function type(w: Wrapper, test: string, value: string) {
  await at(w, test).find('input').setValue(value)
}

/** The precautions and the calibrator a test by injection needs. */
async function precautions(w: Wrapper) {
  await at(w, 'precaution-isolated-yes').trigger('click')
  await type(w, 'precaution-permit', 'PTW-2207')
  await at(w, 'precaution-control-room').find('input').setValue(true)
  await at(w, 'precaution-hazardous-no').trigger('click')
  await type(w, 'calibrator-id', 'CAL-12')
  await type(w, 'calibrator-due', '2026-12-31')
}

describe('TripTestFormView', () => {
  it("sends the procedure's own tolerance and the as-found reading in mV as typed", async () => {
    const { w, writes } = await open(['technician'])
    await precautions(w)
    await at(w, 'own-tolerance').find('input').setValue(true)
    await type(w, 'tolerance', '2.5')
    await at(w, 'as-found-mode-signal').trigger('click')
    await type(w, 'as-found-signal', '32.1')
    expect(at(w, 'as-found-signal-unit').text()).toContain('mV')
    await at(w, 'save-test').trigger('click')
    await vi.waitFor(() => expect(writes()).toHaveLength(1))
    expect(writes()[0]).toMatchObject({ method: 'POST', path: '/trip-tests' })
    expect(writes()[0].body).toMatchObject({
      limitId: 5,
      kind: 'full',
      method: 'injection',
      injectionPoint: 'sensor',
      calibratorId: 'CAL-12',
      calibratorDueDate: '2026-12-31',
      performedAt: NOW.toISOString(),
      tolerance: 2.5,
      toleranceUnit: 'eu',
      asFound: null,
      asFoundSignal: { value: 32.1, unit: 'mV' },
      noTrip: false,
      channels: [],
      precautions: {
        isolated: true,
        permitToWork: 'PTW-2207',
        controlRoomInformed: true,
        hazardousArea: false,
        realTripAcknowledged: false,
      },
    })
  })

  it('refuses an unreadable as-found value and missing precautions at their fields, and sends nothing', async () => {
    const { w, writes } = await open(['technician'])
    await at(w, 'own-tolerance').find('input').setValue(true)
    await type(w, 'tolerance', 'two')
    await type(w, 'as-found', '78O')
    await at(w, 'save-test').trigger('click')
    await flushPromises()
    expect(messages(w, 'as-found')).toEqual(['Enter a number'])
    expect(messages(w, 'tolerance')).toEqual(['Enter a number'])
    expect(messages(w, 'precaution-permit')).toEqual(['Enter the permit to work'])
    expect(messages(w, 'precaution-control-room')).toEqual(['Inform the control room before the test'])
    expect(at(w, 'save-error').text()).toContain('Some fields need attention')
    expect(writes()).toEqual([])
  })

  it.each<[Role, boolean, string]>([
    ['technician', true, ''],
    ['operator', false, 'Only a maintenance technician of this site records tests.'],
  ])('the save button follows the rule book: offered to the %s: %s', async (role, offered, reason) => {
    const { w } = await open([role])
    expect(at(w, 'save-test').exists()).toBe(offered)
    expect(at(w, 'save-refused').exists()).toBe(!offered)
    if (!offered) expect(at(w, 'save-refused').text()).toBe(reason)
  })

  // a correction follows the record's `edit`, as the server answers it for the user (the trip-test rule book)
  it.each<[string, [Meaning, number][], number, 'enabled' | 'disabled' | 'hidden', string]>([
    ['the technician who recorded it corrects it', [], RECORDER, 'enabled', ''],
    ['another technician does not', [], ME, 'hidden', 'Only the technician who recorded the test edits it'],
    [
      'nobody corrects a signed record',
      [['performed', RECORDER]],
      RECORDER,
      'disabled',
      'A signed test record is locked; record a new test instead',
    ],
  ])('%s', async (_, signedAs, userId, button, reason) => {
    const { w } = await open(['technician'], { signedAs, userId })
    const save = at(w, 'save-test')
    expect(save.exists() ? (save.attributes('disabled') === undefined ? 'enabled' : 'disabled') : 'hidden').toBe(button)
    expect(at(w, 'save-refused').exists() ? at(w, 'save-refused').text() : '').toBe(reason)
  })
})

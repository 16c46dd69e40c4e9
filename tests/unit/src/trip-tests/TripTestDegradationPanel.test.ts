import { flushPromises } from '@vue/test-utils'
import { afterEach, describe, expect, it, vi } from 'vitest'
import type { DegradationItem } from '@shared/schemas/trip-tests.ts'
import TripTestDegradationPanel from '@/features/trip-tests/components/TripTestDegradationPanel.vue'
import { answerApi, FHR, mountView, NOW, resetPage, type Routes } from '../mount-view.ts'

// The degradation panel of a test record (docs/trip-tests.md#degraded-limits): a shift supervisor signs the
// compensating measures and a repair deadline; a deadline beyond the function's MTTR waits for the plant manager's
// signature. The clock is fixed at 12:00 UTC on 6 July 2026.

const ALLOWED = { allowed: true } as const
const REFUSED = {
  allowed: false,
  status: 403,
  reason: 'Only a shift supervisor of the site signs the measures.',
} as const

function degradation(o: Partial<DegradationItem> = {}): DegradationItem {
  return {
    id: 3,
    testId: 11,
    openedAt: '2026-07-06T09:00:00.000Z',
    reasons: ['It did not trip'],
    compensatingMeasures: null,
    repairDeadline: null,
    measuresSignedBy: null,
    measuresSignedAt: null,
    mttrHours: 72,
    deadlineBeyondMttr: false,
    deadlineApprovedBy: null,
    deadlineApprovedAt: null,
    escalatedAt: null,
    clearedAt: null,
    clearedByTestId: null,
    actions: { signMeasures: ALLOWED, approveDeadline: REFUSED },
    ...o,
  }
}

const MEASURE = 'Operator watches TI-101 every 15 min'
/** The degradation once a shift supervisor signed the measure with `repairDeadline`. */
const measuresSigned = (repairDeadline: string, o: Partial<DegradationItem> = {}) =>
  degradation({
    compensatingMeasures: [MEASURE],
    repairDeadline,
    measuresSignedBy: 'Someone',
    measuresSignedAt: '2026-07-06T12:00:00.000Z',
    ...o,
  })

const refusal = (message: string, fields: Record<string, string[]> = {}) => ({
  status: 400,
  body: { error: { code: 'VALIDATION_FAILED', message, details: { fields } } },
})

async function open(item: DegradationItem, routes: Routes = {}) {
  vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
  const calls = answerApi(routes)
  const w = await mountView(TripTestDegradationPanel, {
    user: { id: 7, roles: [{ siteId: FHR.id, role: 'shift_supervisor' }] },
    props: { limitId: 5, tag: 'TSHH-101', items: [item], timeZone: FHR.timeZone, testId: 11 },
  })
  return { w, calls }
}
type Wrapper = Awaited<ReturnType<typeof open>>['w']
const fieldText = (w: Wrapper, test: string) => w.get(`[data-test="${test}"]`).text()

describe('TripTestDegradationPanel', () => {
  afterEach(resetPage)

  it('names what is missing at the fields before it signs anything', async () => {
    const { w, calls } = await open(degradation())
    await w.get('[data-test="degradation-sign"]').trigger('click')
    await flushPromises()

    expect(fieldText(w, 'measure-0')).toContain('Record at least one compensating measure')
    expect(fieldText(w, 'repair-deadline')).toContain('Set the repair deadline')
    expect(fieldText(w, 'degradation-password')).toContain('Enter your password to sign')
    expect(w.find('[data-test="degradation-error"]').exists()).toBe(false)
    expect(calls.filter((c) => c.method === 'POST')).toEqual([])
  })

  it('shows a refused signature with its sentence and field message, then signs on the next try', async () => {
    const signed = measuresSigned('2026-07-08')
    const answers = [
      refusal('Some fields are not valid', { repairDeadline: ['Later than the unit may run'] }),
      { body: { items: [signed] } },
    ]
    const { w, calls } = await open(degradation(), { 'POST /limits/5/degradation': () => answers.shift()! })
    await w.get('[data-test="measure-0"] input').setValue(MEASURE)
    await w.get('[data-test="repair-deadline"] input').setValue('2026-07-08')
    await w.get('[data-test="degradation-password"] input').setValue('secret-password')
    await w.get('[data-test="degradation-sign"]').trigger('click')
    await vi.waitFor(() => expect(w.find('[data-test="degradation-error"]').exists()).toBe(true))

    expect(fieldText(w, 'degradation-error')).toBe('Some fields are not valid')
    expect(fieldText(w, 'repair-deadline')).toContain('Later than the unit may run')
    expect(w.get<HTMLInputElement>('[data-test="degradation-password"] input').element.value).toBe('')
    expect(w.emitted('changed')).toBeUndefined()

    await w.get('[data-test="degradation-password"] input').setValue('secret-password')
    await w.get('[data-test="degradation-sign"]').trigger('click')
    await vi.waitFor(() => expect(w.emitted('changed')).toEqual([[[signed]]]))
    expect(w.find('[data-test="degradation-error"]').exists()).toBe(false)
    const body = { compensatingMeasures: [MEASURE], repairDeadline: '2026-07-08', password: 'secret-password' }
    expect(calls.filter((c) => c.method === 'POST').map((c) => c.body)).toEqual([body, body])
  })

  it("takes the plant manager's signature for a deadline beyond the MTTR, showing a refusal at the password", async () => {
    const beyond = measuresSigned('2026-07-20', {
      deadlineBeyondMttr: true,
      actions: { signMeasures: REFUSED, approveDeadline: ALLOWED },
    })
    const accepted = { ...beyond, deadlineApprovedBy: 'Someone', deadlineApprovedAt: '2026-07-06T12:00:00.000Z' }
    const answers = [
      { status: 403, body: { error: { code: 'FORBIDDEN', message: 'The password is not right' } } },
      { body: { items: [accepted] } },
    ]
    const { w, calls } = await open(beyond, {
      'POST /limits/5/degradation/deadline-approval': () => answers.shift()!,
    })
    const password = () => w.get('[data-test="deadline-approval-password"] input')

    await w.get('[data-test="deadline-approve"]').trigger('click')
    await flushPromises()
    expect(fieldText(w, 'deadline-approval-password')).toContain('Enter your password to sign')
    expect(calls.filter((c) => c.method === 'POST')).toEqual([])

    await password().setValue('wrong-password')
    await w.get('[data-test="deadline-approve"]').trigger('click')
    await vi.waitFor(() => expect(fieldText(w, 'deadline-approval-password')).toContain('The password is not right'))
    expect(w.get<HTMLInputElement>('[data-test="deadline-approval-password"] input').element.value).toBe('')

    await password().setValue('right-password')
    await w.get('[data-test="deadline-approve"]').trigger('click')
    await vi.waitFor(() => expect(w.emitted('changed')).toEqual([[[accepted]]]))
    expect(fieldText(w, 'deadline-approval-password')).not.toContain('The password is not right')
    expect(calls.filter((c) => c.method === 'POST').map((c) => c.body)).toEqual([
      { password: 'wrong-password' },
      { password: 'right-password' },
    ])
  })
})

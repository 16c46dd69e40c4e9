import { afterEach, describe, expect, it, vi } from 'vitest'
import type { InstrumentRecord } from '@shared/schemas/register.ts'
import InstrumentFormView from '@/features/register/views/InstrumentFormView.vue'
import { answerApi, FHR, mountView, type Routes } from '../mount-view.ts'
import { TC } from './limit-fixture.ts'

// The instrument form: its fields come from a typed field list (useFormFields) and its load, check and save from the
// record-form composable (useRecordForm). These checks pin what a user sees and what the API receives; the expected
// bodies follow the shared instrument schema (shared/schemas/register.ts).

const ENGINEER = { id: 7, roles: [{ siteId: FHR.id, role: 'safety_engineer' as const }] }

// the heater's outlet instrument of the limit tests, here a 4-wire Pt100 on 0 … 600 °C
const RTD: InstrumentRecord = {
  ...TC,
  rangeHigh: 600,
  normalLow: 320,
  normalHigh: 370,
  designHigh: 450,
  signal: { kind: 'rtd', element: 'Pt100', wires: 4, headTransmitter: true },
  revision: 3,
}

const COMMON: Routes = {
  'GET /sites': () => ({ body: { items: [FHR], total: 1 } }),
  'GET /areas': () => ({ body: { items: [{ id: 3, siteId: FHR.id, name: 'Crude Unit' }], total: 1 } }),
  'GET /processes': () => ({ body: { items: [{ id: 4, areaId: 3, name: 'Heater H-101' }], total: 1 } }),
}

const inputOf = (w: Awaited<ReturnType<typeof mountView>>, test: string) =>
  w.find<HTMLInputElement>(`[data-test="${test}"] input`).element

describe('InstrumentFormView', () => {
  afterEach(() => vi.unstubAllGlobals())

  it('chooses the only site, and refuses a save without a process with the field message and no request', async () => {
    const calls = answerApi(COMMON)
    const w = await mountView(InstrumentFormView, { user: ENGINEER })
    expect(w.find('[data-test="instrument-site"]').text()).toContain('FHR · Fernhollow Refinery')

    await w.find('form').trigger('submit')
    expect(w.find('[data-test="form-error"]').text()).toBe('Some fields need attention')
    expect(w.find('[data-test="instrument-process"]').text()).toContain('Choose the process')
    expect(w.find('[data-test="instrument-tag"]').text()).toContain('Enter a tag')
    expect(calls.filter((c) => c.method !== 'GET')).toEqual([])
  })

  it('fills the fields from the instrument, shows only its signal kind, and saves the patch without the process', async () => {
    let patched: unknown
    const calls = answerApi({
      ...COMMON,
      'GET /instruments/9': () => ({ body: RTD }),
      'PATCH /instruments/9': (_u, init) => {
        patched = JSON.parse(String(init?.body))
        return { body: { ...RTD, tag: 'TT-101A' } }
      },
    })
    const w = await mountView(InstrumentFormView, { user: ENGINEER, props: { id: '9' } })
    expect(inputOf(w, 'instrument-tag').value).toBe('TT-101')
    expect(inputOf(w, 'instrument-range-high').value).toBe('600')
    expect(w.text()).toContain('Element')
    expect(w.text()).not.toContain('Voltage range')
    expect(w.find('[data-test="save-instrument"]').text()).toBe('Save instrument')

    await w.find('[data-test="instrument-tag"] input').setValue('TT-101A')
    await w.find('form').trigger('submit')
    await vi.waitFor(() => expect(patched).toBeDefined())
    expect(patched).toMatchObject({
      tag: 'TT-101A',
      rangeLow: 0,
      rangeHigh: 600,
      designLow: null,
      signal: { kind: 'rtd', element: 'Pt100', wires: 4, headTransmitter: true },
    })
    expect(patched).not.toHaveProperty('processId')
    expect(calls.some((c) => c.method === 'POST')).toBe(false)
  })

  it("shows the server's field messages on the fields and its sentence above the buttons", async () => {
    answerApi({
      ...COMMON,
      'GET /instruments/9': () => ({ body: RTD }),
      'PATCH /instruments/9': () => ({
        status: 409,
        body: {
          error: {
            code: 'CONFLICT',
            message: 'The tag is taken at this site',
            details: { fields: { tag: ['TT-101 is taken at FHR'] } },
          },
        },
      }),
    })
    const w = await mountView(InstrumentFormView, { user: ENGINEER, props: { id: '9' } })
    await w.find('form').trigger('submit')
    await vi.waitFor(() => expect(w.find('[data-test="form-error"]').exists()).toBe(true))
    expect(w.find('[data-test="form-error"]').text()).toBe('The tag is taken at this site')
    expect(w.find('[data-test="instrument-tag"]').text()).toContain('TT-101 is taken at FHR')
  })
})

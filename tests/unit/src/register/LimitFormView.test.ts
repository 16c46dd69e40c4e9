import { afterEach, describe, expect, it, vi } from 'vitest'
import type { LimitStatus } from '@shared/domain/operating-window.ts'
import type { Role } from '@shared/schemas/users.ts'
import LimitFormView from '@/features/register/views/LimitFormView.vue'
import { answerApi, mountView } from '../mount-view.ts'
import { heaterTrip, registerRoutes, userWith } from './limit-fixture.ts'

// The limit form edits a draft only: a safety engineer of the limit's site edits a proposed limit; an active limit
// changes through a change request, a retired one not at all (docs/register.md#the-rule-book). Otherwise the form is
// read-only, says why, and sends nothing. The expected sentences are the rule book's, written out by hand.

// the operating-window chart draws on a canvas, which happy-dom has not
vi.mock('@/features/register/components/LimitWindowChart.vue', () => ({ default: { render: () => null } }))

const ACTIVE = 'Limit TSHH-101 is active: it changes only through a change request'
const RETIRED = 'Limit TSHH-101 is retired and kept for the record; it is not edited'
const NOT_ENGINEER = 'Only a safety engineer of this site edits a draft limit.'

// [status, roles, at another site, the sentence of a read-only form or null when editable]
const TABLE: [LimitStatus, Role[], boolean, string | null][] = [
  ['proposed', ['safety_engineer'], false, null],
  ['active', ['safety_engineer'], false, ACTIVE],
  ['retired', ['safety_engineer'], false, RETIRED],
  ['proposed', ['safety_engineer'], true, NOT_ENGINEER],
  ['proposed', ['technician'], false, NOT_ENGINEER],
  ['active', ['technician'], false, NOT_ENGINEER],
]

const inputOf = (w: Awaited<ReturnType<typeof mountView>>, test: string) =>
  w.find<HTMLInputElement>(`[data-test="${test}"] input`).element

describe('LimitFormView', () => {
  afterEach(() => vi.unstubAllGlobals())

  it.each(TABLE)('limit %s, %j (at another site: %s): %s', async (status, roles, elsewhere, reason) => {
    const limit = heaterTrip(status)
    const calls = answerApi({ ...registerRoutes(limit), 'PATCH /limits/5': () => ({ body: limit }) })
    const w = await mountView(LimitFormView, { user: userWith(roles, elsewhere ? 2 : 1), props: { id: '5' } })
    await vi.waitFor(() => expect(inputOf(w, 'field-tag').value).toBe('TSHH-101'))

    const note = w.find('[data-test="active-note"]')
    const save = w.find<HTMLButtonElement>('[data-test="save-limit"]').element
    const title = w.get('[data-test="limit-form-title"]').text()
    if (reason === null) {
      expect(title).toBe('Edit draft TSHH-101')
      expect(note.exists()).toBe(false)
      expect(inputOf(w, 'field-tag').disabled).toBe(false)
      expect(save.disabled).toBe(false)
    } else {
      expect(title).toBe('Limit TSHH-101 (read only)')
      expect(note.text()).toBe(reason)
      expect(inputOf(w, 'field-tag').disabled).toBe(true)
      expect(save.disabled).toBe(true)
      // a submit (Enter in a field) sends nothing either
      await w.find('form').trigger('submit')
      expect(calls.filter((c) => c.method !== 'GET')).toEqual([])
    }
  })

  it('saves an edited draft with the revision it read', async () => {
    const limit = heaterTrip('proposed')
    let patched: unknown
    answerApi({
      ...registerRoutes(limit),
      'PATCH /limits/5': (_u, init) => {
        patched = JSON.parse(String(init?.body))
        return { body: { ...limit, description: 'Heater outlet trip', revision: 3 } }
      },
    })
    const w = await mountView(LimitFormView, { user: userWith(['safety_engineer']), props: { id: '5' } })
    await vi.waitFor(() => expect(inputOf(w, 'field-tag').value).toBe('TSHH-101'))
    await w
      .find('[data-test="field-description"] textarea, [data-test="field-description"] input')
      .setValue('Heater outlet trip')
    await w.find('form').trigger('submit')
    await vi.waitFor(() => expect(patched).toBeDefined())
    expect(patched).toMatchObject({ description: 'Heater outlet trip', expectedRevision: 2 })
  })
})

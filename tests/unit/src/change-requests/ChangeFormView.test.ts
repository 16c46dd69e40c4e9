import { flushPromises } from '@vue/test-utils'
import { afterEach, describe, expect, it, vi } from 'vitest'
import type { ChangeRequestDto } from '@shared/schemas/change-requests.ts'
import type { Site } from '@shared/schemas/sites.ts'
import ChangeFormView from '@/features/change-requests/views/ChangeFormView.vue'
import { heaterTrip } from '../register/limit-fixture.ts'
import { stubVisualViewport, answerApi, FHR, mountView, NOW, type Routes } from '../mount-view.ts'
import { PROPOSER, request } from './change-fixture.ts'

// The change request form checks its input with the schema the server parses (CreateChangeRequestInputSchema in
// shared/schemas/change-requests.ts) before it sends anything, and sends a new request, or the edited content with the
// version it read. The expected messages are the schema's own sentences, written out here.

const OTHER: Site = { ...FHR, id: 2, code: 'FHC', name: 'Fernhollow Chemicals' }

afterEach(() => {
  vi.useRealTimers()
  vi.unstubAllGlobals()
})

async function open(o: { sites: Site[]; routes?: Routes; id?: string; path?: string; userId?: number }) {
  const calls = answerApi({
    'GET /sites': () => ({ body: { items: o.sites, total: o.sites.length } }),
    'GET /areas': () => ({ body: { items: [], total: 0 } }),
    'GET /limits': () => ({ body: { items: [], total: 0 } }),
    ...o.routes,
  })
  const w = await mountView(ChangeFormView, {
    user: { id: o.userId ?? PROPOSER, roles: o.sites.map((s) => ({ siteId: s.id, role: 'safety_engineer' })) },
    props: o.id ? { id: o.id } : {},
    path: o.path,
  })
  return { w, calls, writes: () => calls.filter((c) => c.method !== 'GET') }
}
const messages = (w: Awaited<ReturnType<typeof open>>['w'], test: string) =>
  w
    .find(`[data-test="${test}"]`)
    .findAll('.v-messages__message')
    .map((m) => m.text())

describe('ChangeFormView', () => {
  it('a new request without site, title or items is refused at its fields and nothing is sent', async () => {
    const { w, writes } = await open({ sites: [FHR, OTHER] })
    await w.find('form').trigger('submit')
    await flushPromises()
    expect(messages(w, 'change-site')).toEqual(['Choose the site'])
    expect(messages(w, 'change-title')).toEqual(['Enter a title'])
    expect(w.find('[data-test="form-error"]').text()).toContain('Add at least one item')
    expect(writes()).toEqual([])
  })

  it('the only site is chosen; an item without its limit is told to choose it and nothing is sent', async () => {
    stubVisualViewport()
    const { w, writes } = await open({ sites: [FHR] })
    expect(w.find('[data-test="change-site"]').text()).toContain('FHR · Fernhollow Refinery')
    await w.find('[data-test="change-title"] input').setValue('Lower the heater outlet trip')
    await w.find('[data-test="item-add"]').trigger('click')
    await flushPromises()
    document.body.querySelector<HTMLElement>('[data-test="item-add-modify"]')!.click()
    await flushPromises()
    await w.find('form').trigger('submit')
    await flushPromises()
    expect(messages(w, 'item-target-0')).toEqual(['Choose the limit'])
    expect(messages(w, 'change-title')).toEqual([])
    expect(writes()).toEqual([])
  })

  it('editing sends the content with the version read (not the site), then submits when asked', async () => {
    vi.useFakeTimers({ now: NOW, toFake: ['Date'] })
    const cr: ChangeRequestDto = request('draft', {
      items: [
        {
          ...request('draft').items[0],
          limitId: 5,
          changes: { setpoint: { from: 410, to: 405 } },
        },
      ],
    })
    const { w, writes } = await open({
      sites: [FHR],
      id: String(cr.id),
      routes: {
        [`GET /change-requests/${cr.id}`]: () => ({ body: cr }),
        'GET /limits/5': () => ({ body: heaterTrip('active') }),
        [`PATCH /change-requests/${cr.id}`]: () => ({ body: cr }),
        [`POST /change-requests/${cr.id}/submission`]: () => ({ body: { ...cr, status: 'submitted' } }),
      },
    })
    expect((w.find('[data-test="change-title"] input').element as HTMLInputElement).value).toBe(cr.title)
    await w.find('[data-test="change-save-submit"]').trigger('click')
    await vi.waitFor(() => expect(writes()).toHaveLength(2))
    expect(writes()).toEqual([
      {
        method: 'PATCH',
        path: `/change-requests/${cr.id}`,
        body: {
          type: 'permanent',
          title: 'Lower the heater outlet trip',
          rationale: 'New burner tiles',
          hazardReference: 'HAZOP-H101-7',
          expiresAt: null,
          items: [{ kind: 'modify', limitId: 5, changes: { setpoint: 405 } }],
          version: 1,
        },
      },
      { method: 'POST', path: `/change-requests/${cr.id}/submission`, body: {} },
    ])
  })
})

import { afterEach, describe, expect, it, vi } from 'vitest'
import type { User } from '@shared/schemas/users.ts'
import UserListView from '@/features/users/views/UserListView.vue'
import { type Answer, answerApi, mountView } from '../mount-view.ts'

// The user dialog of the administration (docs/api.md, POST /api/users): a refusal keeps the dialog open with the
// API's sentence and its messages at the fields; a later success closes it and the list is asked for again.

const created: User = {
  id: 7,
  email: 'new.operator@fernhollow.example',
  displayName: 'New Operator',
  active: true,
  roles: [],
  createdAt: '2026-11-30T08:15:00.000Z',
}

describe('UserListView', () => {
  afterEach(() => {
    vi.unstubAllGlobals()
    document.body.innerHTML = ''
  })

  it('shows a refusal at the fields and in the dialog, then closes the dialog on success', async () => {
    const answers: Answer[] = [
      {
        status: 400,
        body: {
          error: {
            code: 'VALIDATION_FAILED',
            message: 'Some fields are not valid',
            details: { fields: { password: ['At least 12 characters'] } },
          },
        },
      },
      { status: 201, body: created },
    ]
    const calls = answerApi({
      'GET /users': () => ({ body: { items: [], total: 0, page: 1, pageSize: 25 } }),
      'POST /users': () => answers.shift()!,
    })
    // the dialog's menus place themselves in the visual viewport, which happy-dom lacks
    vi.stubGlobal('visualViewport', { width: 1366, height: 900, addEventListener() {}, removeEventListener() {} })
    const w = await mountView(UserListView, { user: { id: 1, roles: [{ siteId: 1, role: 'admin' }] } })
    await w.get('[data-test="user-new"]').trigger('click')
    const save = () => document.body.querySelector<HTMLElement>('[data-test="user-save"]')!
    await vi.waitFor(() => expect(save()).not.toBeNull())

    save().click()
    await vi.waitFor(() => expect(document.body.textContent).toContain('Some fields are not valid'))
    expect(document.body.textContent).toContain('At least 12 characters')
    expect(document.body.querySelector('.v-dialog.v-overlay--active')).not.toBeNull()

    const listsBefore = calls.filter((c) => c.method === 'GET' && c.path === '/users').length
    save().click()
    await vi.waitFor(() => expect(document.body.textContent).not.toContain('Some fields are not valid'))
    await vi.waitFor(() =>
      expect(calls.filter((c) => c.method === 'GET' && c.path === '/users').length).toBeGreaterThan(listsBefore),
    )
    expect(calls.filter((c) => c.method === 'POST' && c.path === '/users')).toHaveLength(2)
    await vi.waitFor(() => expect(document.body.querySelector('.v-dialog.v-overlay--active')).toBeNull())
  })
})

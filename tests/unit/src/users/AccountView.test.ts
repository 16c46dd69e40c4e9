import { afterEach, describe, expect, it, vi } from 'vitest'
import AccountView from '@/features/users/views/AccountView.vue'
import { answerApi, FHR, mountView } from '../mount-view.ts'

// The account page changes the signed-in user's password: the repeat must match, the shared schema
// (ChangeOwnPasswordInputSchema, at least 12 characters) checks before sending, and the server's field messages show
// on their fields.

const USER = { id: 7, roles: [{ siteId: FHR.id, role: 'operator' as const }] }

async function fill(w: Awaited<ReturnType<typeof mountView>>, current: string, next: string, repeat: string) {
  await w.find('[data-test="account-currentPassword"] input').setValue(current)
  await w.find('[data-test="account-newPassword"] input').setValue(next)
  await w.find('[data-test="account-repeat"] input').setValue(repeat)
  await w.find('[data-test="change-password"]').trigger('click')
}

describe('AccountView', () => {
  afterEach(() => vi.unstubAllGlobals())

  it('refuses differing new passwords and a short one without asking the server', async () => {
    const calls = answerApi({})
    const w = await mountView(AccountView, { user: USER })
    await fill(w, 'old secret', 'a long new secret', 'another long secret')
    expect(w.find('[data-test="account-repeat"]').text()).toContain('The two new passwords differ')

    await fill(w, 'old secret', 'short', 'short')
    await vi.waitFor(() => expect(w.find('[data-test="account-newPassword"] .v-messages').text()).not.toBe(''))
    expect(calls.filter((c) => c.method === 'POST')).toEqual([])
  })

  it("sends the current and new password, and shows the server's message on the current password", async () => {
    const calls = answerApi({
      'POST /account/password': () => ({
        status: 400,
        body: {
          error: {
            code: 'VALIDATION_FAILED',
            message: 'Check the fields',
            details: { fields: { currentPassword: ['The current password is not right'] } },
          },
        },
      }),
    })
    const w = await mountView(AccountView, { user: USER })
    await fill(w, 'old secret', 'a long new secret', 'a long new secret')
    await vi.waitFor(() =>
      expect(w.find('[data-test="account-currentPassword"]').text()).toContain('The current password is not right'),
    )
    expect(calls.find((c) => c.method === 'POST')?.body).toEqual({
      currentPassword: 'old secret',
      newPassword: 'a long new secret',
    })
  })
})

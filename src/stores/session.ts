import { defineStore } from 'pinia'
import { computed, ref } from 'vue'
import type { AppRule } from '@shared/abilities/index.ts'
import type { RoleAssignment } from '@shared/schemas/users.ts'
import { http, setCsrfToken } from '@/api/client'
import { ability } from '@/plugins/ability'

export interface SessionUser {
  id: number
  email: string
  displayName: string
  roles: RoleAssignment[]
}
interface SessionBody {
  user: SessionUser | null
  rules: AppRule[]
  csrfToken: string
}

/** The signed-in user, their rules (mirrored into the CASL ability) and the CSRF token. */
export const useSessionStore = defineStore('session', () => {
  const user = ref<SessionUser | null>(null)
  const loaded = ref(false)
  const signedIn = computed(() => user.value !== null)

  function apply(body: SessionBody) {
    user.value = body.user
    setCsrfToken(body.csrfToken)
    ability.update(body.rules)
    loaded.value = true
  }

  async function load() {
    apply(await http.get<SessionBody>('/session'))
  }

  async function signIn(email: string, password: string) {
    if (!loaded.value) await load()
    apply(await http.post<SessionBody>('/session', { email, password }))
  }

  async function signOut() {
    await http.delete('/session').catch(() => undefined)
    await load()
  }

  /** Clears the local state after the server said the session ended. */
  function expire() {
    user.value = null
    ability.update([])
    loaded.value = false
  }

  return { user, loaded, signedIn, load, signIn, signOut, expire }
})

import { abilitiesPlugin } from '@casl/vue'
import { PiniaColada } from '@pinia/colada'
import { flushPromises, mount, RouterLinkStub, type VueWrapper } from '@vue/test-utils'
import { createPinia, setActivePinia } from 'pinia'
import { vi } from 'vitest'
import { type Component, h } from 'vue'
import { createMemoryHistory, createRouter, type RouteRecordRaw } from 'vue-router'
import { routes } from '@/router/routes'
import { createVuetify } from 'vuetify'
import { vuetifyOptions } from '@/plugins/vuetify'
import { createAppAbility, defineRulesFor } from '@shared/abilities/index.ts'
import { DEFAULT_SITE_POLICY, type Site } from '@shared/schemas/sites.ts'
import type { Role, RoleAssignment } from '@shared/schemas/users.ts'
import { useSessionStore } from '@/stores/session'

// Mounts a view as the app does (Vuetify with the app's defaults and button aliases, Pinia, Pinia Colada, the CASL
// ability of a signed-in user) with the API answered by a table of routes in place of the network.

export const FHR: Site = {
  id: 1,
  code: 'FHR',
  name: 'Fernhollow Refinery',
  timeZone: 'Europe/Berlin',
  policy: DEFAULT_SITE_POLICY,
}

/** The fixed clock of the page tests (their fake Date): 6 July 2026, 12:00 UTC. */
export const NOW = new Date('2026-07-06T12:00:00Z')

/** The instant `h` hours after NOW (before it when negative), as the API writes times. */
export const at = (h: number) => new Date(NOW.getTime() + h * 3_600_000).toISOString()

export type Answer = { status?: number; body: unknown }
export type Routes = Record<string, (url: URL, init?: RequestInit) => Answer>

/** Replaces fetch: `GET /api/x` is looked up as 'GET /x' (without the query); unknown calls answer 404. */
export function answerApi(routes: Routes) {
  const calls: { method: string; path: string; body: unknown }[] = []
  vi.stubGlobal('fetch', async (input: string, init?: RequestInit) => {
    const url = new URL(input, 'http://localhost')
    const method = init?.method ?? 'GET'
    const path = url.pathname.replace(/^\/api/, '')
    calls.push({ method, path, body: init?.body ? JSON.parse(String(init.body)) : undefined })
    const route = routes[`${method} ${path}`]
    const a = route ? route(url, init) : { status: 404, body: { error: { code: 'NOT_FOUND', message: 'No such' } } }
    return new Response(JSON.stringify(a.body), {
      status: a.status ?? 200,
      headers: { 'Content-Type': 'application/json' },
    })
  })
  return calls
}

export async function mountView(
  view: Component,
  opts: { user: { id: number; roles: RoleAssignment[] }; props?: Record<string, unknown>; path?: string },
) {
  // the app's routes, so that links by name resolve; each path renders nothing here
  const router = createRouter({
    history: createMemoryHistory(),
    routes: routes.map((r) => ({ ...r, component: { render: () => h('div') }, children: undefined }) as RouteRecordRaw),
  })
  await router.push(opts.path ?? '/')
  await router.isReady()
  const pinia = createPinia()
  setActivePinia(pinia)
  const session = useSessionStore()
  session.user = {
    id: opts.user.id,
    email: 'someone@fernhollow.example',
    displayName: 'Someone',
    roles: opts.user.roles,
  }
  const ability = createAppAbility(defineRulesFor(opts.user))
  const wrapper = mount(view, {
    props: opts.props,
    global: {
      plugins: [
        createVuetify(vuetifyOptions),
        pinia,
        router,
        [PiniaColada, {}],
        [abilitiesPlugin, ability, { useGlobalProperties: true }],
      ],
      stubs: { RouterLink: RouterLinkStub },
    },
  })
  await flushPromises()
  return wrapper
}

/** What the site choices (useSiteChoices) ask for: the refinery, with no areas. */
export const SITE_CHOICES: Routes = {
  'GET /sites': () => ({ body: { items: [FHR], total: 1 } }),
  'GET /areas': () => ({ body: { items: [], total: 0 } }),
}

/** Mounts the page of record `id` (its `id` prop) for user `user.id` holding `user.roles` at the refinery, or at `user.siteId`. */
export function mountRecordPage(view: Component, id: number, user: { id: number; roles: Role[]; siteId?: number }) {
  const siteId = user.siteId ?? FHR.id
  return mountView(view, {
    user: { id: user.id, roles: user.roles.map((role) => ({ siteId, role })) },
    props: { id: String(id) },
  })
}

/**
 * Mounts the page of `record` as mountRecordPage does, with the API answering GET `path` (without /api) with the
 * record, the site choices and the routes of `more`; answers the page and the calls it made.
 */
export async function openRecordPage(
  view: Component,
  path: string,
  record: { id: number },
  user: { id: number; roles: Role[]; siteId?: number },
  more: Routes = {},
) {
  const calls = answerApi({ [`GET ${path}`]: () => ({ body: record }), ...SITE_CHOICES, ...more })
  const w = await mountRecordPage(view, record.id, user)
  return { w, calls }
}

/** Vuetify's overlays (dialogs, menus) read the visual viewport, which happy-dom does not provide: a desktop one. */
export function stubVisualViewport() {
  vi.stubGlobal('visualViewport', { width: 1366, height: 900, addEventListener() {}, removeEventListener() {} })
}

/** Undoes what a test of a page changed: the real clock, the globals (fetch, visual viewport), an empty body (dialogs). */
export function resetPage() {
  vi.useRealTimers()
  vi.unstubAllGlobals()
  document.body.innerHTML = ''
}

/** Opens the dialog of the page's button `[data-test=button]`, the visual viewport stubbed for its overlay. */
export async function openDialog(w: VueWrapper, button: string) {
  stubVisualViewport()
  await w.find(`[data-test="${button}"]`).trigger('click')
  await flushPromises()
}

/** Types `value` into the field `[data-test=test]` of the open dialog (teleported to the body). */
export function typeInDialog(test: string, value: string) {
  const input = document.body.querySelector<HTMLInputElement | HTMLTextAreaElement>(
    `[data-test="${test}"] input, [data-test="${test}"] textarea`,
  )!
  input.value = value
  input.dispatchEvent(new Event('input'))
}

/** Clicks `[data-test=test]` of the open dialog (teleported to the body). */
export const clickInDialog = (test: string) =>
  document.body.querySelector<HTMLElement>(`[data-test="${test}"]`)!.click()

/**
 * The workflow buttons of a record's page that are shown, by name (data-test `${prefix}-${name}`): true when
 * enabled, else the reason it is disabled (AppRuleButton's tooltip, docs/architecture.md#rule-books).
 */
export function ruleButtons(w: VueWrapper, prefix: string, names: readonly string[]) {
  const out: Record<string, true | string> = {}
  for (const name of names) {
    const btn = w.find(`[data-test="${prefix}-${name}"]`)
    if (!btn.exists()) continue
    // a button carries `disabled`; a link (a rule action that opens a page) carries Vuetify's disabled class only
    const disabled = btn.attributes('disabled') !== undefined || btn.classes('v-btn--disabled')
    out[name] = disabled ? (btn.element.parentElement?.dataset.reason ?? '') : true
  }
  return out
}

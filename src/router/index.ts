import { createRouter, createWebHistory, type RouteLocationNormalized } from 'vue-router'
import type { Action, SubjectName } from '@shared/abilities/index.ts'
import { prefetchGet, setUnauthenticatedHandler } from '@/api/client'
import { ability } from '@/plugins/ability'
import { useSessionStore } from '@/stores/session'
import { routes } from './routes'

declare module 'vue-router' {
  interface RouteMeta {
    layout?: 'auth' | 'default'
    public?: boolean
    /** The ability needed to open the route. */
    can?: [Action, SubjectName]
    title?: string
    /**
     * Asks for the page's main data on first load, while the page's code is still loading; resolves once it is in
     * (`prefetchGet`, src/api/client.ts).
     */
    prefetch?: (to: RouteLocationNormalized) => Promise<unknown>
  }
}

const router = createRouter({ history: createWebHistory(), routes })

/** Starts loading the lazily imported views of a route (`() => import(…)`); the router awaits them later. */
function preloadViews(to: RouteLocationNormalized) {
  for (const record of to.matched) {
    for (const view of Object.values(record.components ?? {})) {
      if (typeof view === 'function' && view.length === 0)
        void Promise.resolve((view as () => unknown)()).catch(() => undefined)
    }
  }
}

/** How long the first load waits for the page's data before it shows the page without it (the data follows). */
const FIRST_DATA_WAIT_MS = 3000

/**
 * First load, signed in: asks for what the page (`meta.prefetch`) and the default layout
 * (src/layouts/DefaultLayout.vue: the user's sites and areas, the count of change requests waiting) will ask for, and
 * waits until it is in, at most FIRST_DATA_WAIT_MS, so that the page is drawn once with its data
 * (docs/architecture.md#first-load).
 */
async function firstLoadData(to: RouteLocationNormalized) {
  const asked: Promise<unknown>[] = []
  if (to.meta.layout !== 'auth')
    asked.push(prefetchGet('/sites'), prefetchGet('/areas'), prefetchGet('/change-requests/waiting-count'))
  if (to.meta.prefetch) asked.push(to.meta.prefetch(to))
  let timer: ReturnType<typeof setTimeout> | undefined
  await Promise.race([Promise.all(asked), new Promise((resolve) => (timer = setTimeout(resolve, FIRST_DATA_WAIT_MS)))])
  clearTimeout(timer)
}

router.beforeEach(async (to) => {
  const session = useSessionStore()
  const firstLoad = !session.loaded
  if (firstLoad) {
    // first load: the page's code is fetched while the session is asked for, not after it
    preloadViews(to)
    await session.load().catch(() => undefined)
  }
  if (to.meta.public) return true
  if (!session.signedIn) return { name: 'sign-in', query: { next: to.fullPath } }
  if (to.meta.can && !ability.can(to.meta.can[0], to.meta.can[1])) return { name: 'home' }
  // and its data while the code still loads (docs/architecture.md#first-load)
  if (firstLoad) await firstLoadData(to)
  return true
})

router.afterEach((to) => {
  document.title = to.meta.title ? `${to.meta.title} · Limitkeeper` : 'Limitkeeper'
})

setUnauthenticatedHandler(() => {
  const session = useSessionStore()
  session.expire()
  const current = router.currentRoute.value
  if (!current.meta.public) void router.push({ name: 'sign-in', query: { next: current.fullPath, expired: '1' } })
})

export default router

import { createRouter, createWebHistory, type RouteLocationNormalized } from 'vue-router'
import type { Action, SubjectName } from '@shared/abilities/index.ts'
import { setUnauthenticatedHandler } from '@/api/client'
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
    /** Asks for the page's main data on first load, while the page's code is still loading. */
    prefetch?: (to: RouteLocationNormalized) => void
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
  if (firstLoad) to.meta.prefetch?.(to)
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

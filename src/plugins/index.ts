/**
 * plugins/index.ts — registers Vuetify, Pinia, Pinia Colada (data fetching), the router and the CASL ability
 * (called from main.ts).
 */
import type { App } from 'vue'
import { abilitiesPlugin } from '@casl/vue'
import { PiniaColada } from '@pinia/colada'
import { createPinia } from 'pinia'
import router from '@/router'
import { ability } from './ability'
import vuetify from './vuetify'

export function registerPlugins(app: App) {
  app
    .use(vuetify)
    .use(createPinia())
    // Data fetching: loading and error state, cache keyed per resource, invalidation after mutations
    // (docs/architecture.md#client-data-fetching). Data older than 10 s is fetched again when a view mounts.
    .use(PiniaColada, { queryOptions: { staleTime: 10_000, refetchOnWindowFocus: false } })
    .use(router)
    .use(abilitiesPlugin, ability, { useGlobalProperties: true })
}

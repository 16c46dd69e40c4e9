/**
 * plugins/index.ts — registers Vuetify, Pinia, the router and the CASL ability (called from main.ts).
 */
import type { App } from 'vue'
import { abilitiesPlugin } from '@casl/vue'
import { createPinia } from 'pinia'
import router from '@/router'
import { ability } from './ability'
import vuetify from './vuetify'

export function registerPlugins(app: App) {
  app.use(vuetify).use(createPinia()).use(router).use(abilitiesPlugin, ability, { useGlobalProperties: true })
}

import { defineStore } from 'pinia'
import { ref } from 'vue'
import type { Area, Site } from '@shared/schemas/sites.ts'
import { http } from '@/api/client'

/** Sites and areas the user may see: shared by filters, forms and the app bar. */
export const useSitesStore = defineStore('sites', () => {
  const sites = ref<Site[]>([])
  const areas = ref<Area[]>([])
  let loading: Promise<void> | null = null

  async function load(force = false) {
    if (loading && !force) return loading
    loading = (async () => {
      const [s, a] = await Promise.all([http.get<{ items: Site[] }>('/sites'), http.get<{ items: Area[] }>('/areas')])
      sites.value = s.items
      areas.value = a.items
    })()
    return loading
  }
  function codeOf(id: number) {
    return sites.value.find((s) => s.id === id)?.code ?? `#${id}`
  }
  function siteOf(id: number) {
    return sites.value.find((s) => s.id === id)
  }
  return { sites, areas, load, codeOf, siteOf }
})

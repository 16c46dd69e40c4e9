import { computed, onMounted, ref, type Ref, watch } from 'vue'
import type { Site } from '@shared/schemas/sites.ts'
import { useSitesStore } from '@/stores/sites'

// The site and area choices of a screen's filters: the sites the user may see (or those `offer` keeps), and the
// areas of the sites chosen in the filter (of all of them while none is chosen). An area's title names its site
// when the user has more than one.

export interface SiteChoicesOptions {
  /** the site filter, when the screen has one */
  siteId?: Ref<number[]>
  /** the sites to offer (for instance those where the user may do the screen's action); all by default */
  offer?: (site: Site) => boolean
}

export function useSiteChoices(o: SiteChoicesOptions = {}) {
  const store = useSitesStore()
  onMounted(() => void store.load())
  const offered = computed(() => (o.offer ? store.sites.filter(o.offer) : store.sites))
  const siteItems = computed(() => offered.value.map((s) => ({ title: `${s.code} · ${s.name}`, value: s.id })))
  const areaItems = computed(() => {
    const chosen = o.siteId?.value ?? []
    return store.areas
      .filter((a) => offered.value.some((s) => s.id === a.siteId) && (!chosen.length || chosen.includes(a.siteId)))
      .map((a) => ({
        title: offered.value.length > 1 ? `${store.codeOf(a.siteId)} · ${a.name}` : a.name,
        value: a.id,
      }))
  })
  /** the time zone of a site, for the times of a row */
  const tzOf = (id: number) => store.siteOf(id)?.timeZone
  return { sites: store, siteItems, areaItems, tzOf }
}

/** A screen about one site at a time: the site chosen, the user's first site until another is chosen. */
export function useOneSite() {
  const { sites, siteItems, tzOf } = useSiteChoices()
  const siteId = ref<number | null>(null)
  watch(
    () => sites.sites,
    (s) => {
      if (!siteId.value && s.length) siteId.value = s[0].id
    },
    { immediate: true },
  )
  return { sites, siteId, siteItems, tzOf }
}

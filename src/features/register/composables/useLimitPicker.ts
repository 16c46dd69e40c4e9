import { useQuery } from '@pinia/colada'
import type { Limit } from '@shared/schemas/register.ts'
import { computed, onBeforeUnmount, ref, watch, type Ref } from 'vue'
import { getInstrument, getLimit, listActiveLimits, registerKeys } from '../api'

// The active-limit picker of the request and record forms (bypass, trip test, demand): a search that asks the server
// once typing pauses, the chosen limit loaded by id, and the channels of a voted function.

/** How a limit reads in a picker. */
export const limitOptionTitle = (l: Limit) => `${l.tag} · ${l.description || l.processName}`

export function useLimitPicker(o: {
  limitId: Ref<number | null>
  /** the sites whose active limits are offered; nothing is asked while empty */
  siteIds: () => number[]
  /** which of the found limits are offered */
  offer?: (l: Limit) => boolean
  subtitle: (l: Limit) => string
  pageSize?: number
}) {
  const search = ref('')
  const q = ref('')
  let timer: ReturnType<typeof setTimeout> | undefined
  const limitQuery = useQuery({
    key: () => registerKeys.limit(o.limitId.value ?? 0),
    query: () => getLimit(o.limitId.value!),
    enabled: () => !!o.limitId.value,
  })
  const limit = computed<Limit | null>(() => (o.limitId.value ? (limitQuery.data.value ?? null) : null))
  watch(search, (v) => {
    clearTimeout(timer)
    // choosing an option writes its title into the search: that is no new search
    if (limit.value && v === limitOptionTitle(limit.value)) return
    timer = setTimeout(() => (q.value = (v ?? '').trim()), 250)
  })
  onBeforeUnmount(() => clearTimeout(timer))

  const listQuery = computed(() => ({ siteId: o.siteIds(), q: q.value || undefined, pageSize: o.pageSize }))
  const found = useQuery({
    key: () => [...registerKeys.limits, 'active', JSON.stringify(listQuery.value)],
    query: () => listActiveLimits(listQuery.value),
    enabled: () => o.siteIds().length > 0,
    placeholderData: (previous) => previous,
  })
  const items = computed(() => {
    const list = (found.data.value?.items ?? []).filter(o.offer ?? (() => true))
    if (limit.value && !list.some((l) => l.id === limit.value!.id)) list.unshift(limit.value)
    return list.map((l) => ({ title: limitOptionTitle(l), value: l.id, subtitle: o.subtitle(l) }))
  })

  // a voted function's channels (one instrument each), for a bypass or record of one channel
  const channelQuery = useQuery({
    key: () => [...registerKeys.limit(limit.value?.id ?? 0), 'channels'],
    query: () =>
      Promise.all(limit.value!.instrumentIds.map((i) => getInstrument(i).then((x) => ({ id: x.id, tag: x.tag })))),
    enabled: () => (limit.value?.instrumentIds.length ?? 0) > 1,
  })
  const channels = computed(() => ((limit.value?.instrumentIds.length ?? 0) > 1 ? (channelQuery.data.value ?? []) : []))

  return {
    search,
    items,
    limit,
    channels,
    searching: computed(() => found.isLoading.value),
    loadingLimit: computed(() => limitQuery.isLoading.value || channelQuery.isLoading.value),
    error: computed(() => limitQuery.error.value ?? found.error.value ?? channelQuery.error.value),
  }
}

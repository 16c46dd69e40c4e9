import { type EntryKey, useQuery } from '@pinia/colada'
import { computed } from 'vue'
import { errorText } from '@/api/errors'

// The records a panel of the limit page lists (its change requests, proposals, bypasses): one page of them through
// Pinia Colada under the caller's key, and the panel's state for AppLimitPanel (`v-bind="panel"`: the count on record,
// the loading bar, the load error as a sentence, whether any record is shown).

export function useLimitPanelList<I>(options: {
  key: () => EntryKey
  query: () => Promise<{ items: I[]; total: number }>
  /** The sentence when the records cannot be loaded; the API's message unless said. */
  failedText?: string
}) {
  const query = useQuery({ key: options.key, query: options.query })
  const items = computed(() => query.data.value?.items ?? [])
  const total = computed(() => query.data.value?.total ?? 0)
  const panel = computed(() => ({
    total: total.value,
    loading: query.isLoading.value,
    error: query.error.value && options.failedText ? options.failedText : errorText(query.error.value),
    hasItems: items.value.length > 0,
  }))
  return { items, total, panel }
}

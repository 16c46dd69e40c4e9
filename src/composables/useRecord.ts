import { type EntryKey, toCacheKey, useQuery, useQueryCache } from '@pinia/colada'
import { computed } from 'vue'
import { errorText } from '@/api/errors'

// The record of a detail screen, loaded through Pinia Colada under its resource's key. `changed` takes the answer of
// a mutation (the record as it is now): it goes into the cache and the resource's other queries (its lists) are
// fetched again.

export interface RecordKeys {
  /** the key every query of the resource starts with */
  all: EntryKey
  one: (id: number) => EntryKey
}

/** `id` gives the record's id (the route's param); `query` fetches the record. */
export function useRecord<T extends { id: number }>(
  id: () => number | string,
  query: (id: number) => Promise<T>,
  keys: RecordKeys,
) {
  const { data, error, isLoading, refetch } = useQuery({
    key: () => keys.one(Number(id())),
    query: () => query(Number(id())),
  })
  /** why the record could not be loaded, as a sentence ('' while it could) */
  const loadError = computed(() => errorText(error.value))
  const queryCache = useQueryCache()
  function changed(record: T) {
    const own = keys.one(record.id)
    queryCache.setQueryData(own, record)
    void queryCache.invalidateQueries({ key: keys.all, predicate: (e) => e.keyHash !== toCacheKey(own) })
  }
  return { record: data, loadError, loading: isLoading, refetch, changed, queryCache }
}

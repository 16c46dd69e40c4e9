import { type EntryKey, toCacheKey, useQuery, useQueryCache } from '@pinia/colada'
import { computed } from 'vue'
import { messageOf } from '@/api/errors'

// The record of a detail screen, loaded through Pinia Colada under its resource's key. `changed` takes the answer of
// a mutation (the record as it is now): it goes into the cache and the resource's other queries (its lists) are
// fetched again.

export interface RecordOptions<T> {
  /** the record's id (from the route) */
  id: () => number
  key: (id: number) => EntryKey
  query: (id: number) => Promise<T>
  /** the key every query of the resource starts with */
  all: EntryKey
}

export function useRecord<T extends { id: number }>(o: RecordOptions<T>) {
  const { data, error, isLoading, refetch } = useQuery({ key: () => o.key(o.id()), query: () => o.query(o.id()) })
  /** why the record could not be loaded, as a sentence ('' while it could) */
  const loadError = computed(() => (error.value ? messageOf(error.value) : ''))
  const queryCache = useQueryCache()
  function changed(record: T) {
    const own = o.key(record.id)
    queryCache.setQueryData(own, record)
    void queryCache.invalidateQueries({ key: o.all, predicate: (e) => e.keyHash !== toCacheKey(own) })
  }
  return { record: data, loadError, loading: isLoading, refetch, changed, queryCache }
}

import { type EntryKey, useQuery } from '@pinia/colada'
import { computed, ref, watch, type WatchSource } from 'vue'
import { type LocationQueryRaw, type LocationQueryValue, useRoute, useRouter } from 'vue-router'
import { useNotificationsStore } from '@/stores/notifications'

// A list screen's filters, page and page size live in the URL (a filtered view can be bookmarked, shared and
// reloaded); its rows are loaded through Pinia Colada, keyed by resource and query, so a mutation that invalidates
// the resource's key refreshes every list of it.

type QueryValue = LocationQueryValue | LocationQueryValue[] | undefined

/** A query value as text ('' when absent or repeated). */
export const queryText = (v: QueryValue): string => (typeof v === 'string' ? v : '')
/** A query value that may repeat (`status=a&status=b`), as a list of non-empty texts. */
export const queryList = (v: QueryValue): string[] =>
  v === undefined || v === null
    ? []
    : (Array.isArray(v) ? v : [v]).filter((x): x is string => typeof x === 'string' && x !== '')
/** Repeated ids (`siteId=1&siteId=2`); anything not a positive number is dropped. */
export const queryIds = (v: QueryValue): number[] =>
  queryList(v)
    .map(Number)
    .filter((n) => Number.isInteger(n) && n > 0)
/** One id, or null. */
export const queryId = (v: QueryValue): number | null => queryIds(v)[0] ?? null
/** Repeated values kept only where they are one of `allowed`. */
export const queryOneOf = <T extends string>(v: QueryValue, allowed: readonly T[]): T[] =>
  queryList(v).filter((x): x is T => (allowed as readonly string[]).includes(x))
/** A calendar day `YYYY-MM-DD`, or ''. */
export const queryDay = (v: QueryValue): string => (/^\d{4}-\d{2}-\d{2}$/.test(queryText(v)) ? queryText(v) : '')

/** The row type of a page answer `{ items, total }`. */
type RowOf<T> = T extends { items: readonly (infer R)[] } ? R : never

export interface UrlListOptions<T> {
  /** the cache key of one page, from the resource's keys in its api module */
  key: (page: number, pageSize: number) => EntryKey
  query: (page: number, pageSize: number) => Promise<T>
  /** the filters: changing one goes back to the first page */
  filters: WatchSource[]
  /** the filters as the URL shows them (empty ones undefined) */
  url: () => LocationQueryRaw
  pageSize?: number
  /** page sizes a URL may ask for; others fall back to `pageSize` */
  pageSizes?: number[]
  /** false while the filters cannot be asked yet (a date range backwards) */
  enabled?: () => boolean
}

/** Writes a screen's state into the URL's query whenever it changes (empty values left out). */
export function useUrlSync(url: () => LocationQueryRaw) {
  const router = useRouter()
  watch(
    () => JSON.stringify(url()),
    (s) => void router.replace({ query: JSON.parse(s) as LocationQueryRaw }),
  )
}

export function useUrlList<T>(o: UrlListOptions<T>) {
  const route = useRoute()
  const notify = useNotificationsStore()
  const defaultSize = o.pageSize ?? 50
  const page = ref(Math.max(1, Math.trunc(Number(route.query.page)) || 1))
  const askedSize = Number(route.query.pageSize)
  const pageSize = ref(o.pageSizes?.includes(askedSize) ? askedSize : defaultSize)

  watch([...o.filters, pageSize], () => (page.value = 1), { flush: 'sync' })
  useUrlSync(() => ({
    ...o.url(),
    page: page.value > 1 ? String(page.value) : undefined,
    pageSize: pageSize.value !== defaultSize ? String(pageSize.value) : undefined,
  }))

  const list = useQuery({
    key: () => o.key(page.value, pageSize.value),
    query: () => o.query(page.value, pageSize.value),
    enabled: o.enabled ?? (() => true),
    // the rows of the last page stay on screen while the next one loads
    placeholderData: (previous) => previous,
  })
  watch(list.error, (e) => {
    if (e) notify.error(e)
  })
  const items = computed(() => (list.data.value as { items?: RowOf<T>[] } | undefined)?.items ?? [])
  const total = computed(() => (list.data.value as { total?: number } | undefined)?.total ?? 0)
  /** what the screen's v-data-table-server binds (`v-bind="table"`): rows, count, loading, page and page size */
  const table = computed(() => ({
    items: items.value,
    itemsLength: total.value,
    loading: list.isLoading.value,
    page: page.value,
    itemsPerPage: pageSize.value,
    itemsPerPageOptions: o.pageSizes,
    'onUpdate:page': (p: number) => (page.value = p),
    'onUpdate:itemsPerPage': (n: number) => (pageSize.value = n),
  }))
  return { page, pageSize, items, total, loading: list.isLoading, table, ...list }
}

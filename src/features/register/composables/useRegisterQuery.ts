import { computed, reactive, ref, watch } from 'vue'
import { type LocationQuery, type LocationQueryRaw, useRoute, useRouter } from 'vue-router'
import type { ProcessListQuery } from '@shared/schemas/register.ts'
import type { LimitFilters, LimitListQuery } from '../api'

/** A sort key of the data table, as Vuetify keeps it. */
export interface SortItem {
  key: string
  order: 'asc' | 'desc'
}

/** The register's filters as the screen edits them (every multi-choice filter is a list). */
export interface RegisterFilterState {
  siteId: number[]
  areaId: number[]
  processId: number[]
  instrumentId: number[]
  limitClass: string[]
  direction: string[]
  sil: string[]
  status: string[]
  protectionState: string[]
  testStatus: string[]
  hasWarnings: 'true' | 'false' | null
  hasErrors: 'true' | 'false' | null
  q: string
}

const LIST_KEYS = [
  'siteId',
  'areaId',
  'processId',
  'instrumentId',
  'limitClass',
  'direction',
  'sil',
  'status',
  'protectionState',
  'testStatus',
] as const
const ID_KEYS = new Set(['siteId', 'areaId', 'processId', 'instrumentId'])
export const PAGE_SIZES = [25, 50, 100, 200]
const DEFAULT_PAGE_SIZE = 50

function list(v: LocationQuery[string] | undefined): string[] {
  if (v === undefined || v === null) return []
  return (Array.isArray(v) ? v : [v]).filter((x): x is string => typeof x === 'string' && x !== '')
}
function first(v: LocationQuery[string] | undefined): string {
  return list(v)[0] ?? ''
}
const bool = (v: string) => (v === 'true' || v === 'false' ? v : null)

function emptyFilters(): RegisterFilterState {
  return {
    siteId: [],
    areaId: [],
    processId: [],
    instrumentId: [],
    limitClass: [],
    direction: [],
    sil: [],
    status: [],
    protectionState: [],
    testStatus: [],
    hasWarnings: null,
    hasErrors: null,
    q: '',
  }
}

/** Reads the sort parameter `-setpoint,tag`. */
export function parseSortParam(s: string): SortItem[] {
  return s
    .split(',')
    .map((x) => x.trim())
    .filter(Boolean)
    .map((x) => ({ key: x.replace(/^-/, ''), order: x.startsWith('-') ? ('desc' as const) : ('asc' as const) }))
}
/** Writes the sort parameter `-setpoint,tag`. */
export function sortParam(items: SortItem[]): string {
  return items.map((s) => `${s.order === 'desc' ? '-' : ''}${s.key}`).join(',')
}

/** The screen's state as a URL query gives it (unknown or malformed values fall back to the defaults). */
function stateFrom(query: LocationQuery) {
  const filters = emptyFilters()
  for (const k of LIST_KEYS) {
    const values = list(query[k])
    ;(filters[k] as (string | number)[]) = ID_KEYS.has(k)
      ? values.map(Number).filter((n) => Number.isInteger(n) && n > 0)
      : values
  }
  filters.hasWarnings = bool(first(query.hasWarnings))
  filters.hasErrors = bool(first(query.hasErrors))
  filters.q = first(query.q)
  const p = Number(first(query.page))
  const size = Number(first(query.pageSize))
  return {
    filters,
    sortBy: parseSortParam(first(query.sort)),
    page: Number.isInteger(p) && p > 0 ? p : 1,
    pageSize: PAGE_SIZES.includes(size) ? size : DEFAULT_PAGE_SIZE,
  }
}

/** The filters as the API takes them (empty ones left out). */
function filtersForApi(filters: RegisterFilterState): LimitFilters {
  const f: LimitFilters = {}
  for (const k of LIST_KEYS) if (filters[k].length) (f[k] as (string | number)[]) = [...filters[k]]
  if (filters.hasWarnings) f.hasWarnings = filters.hasWarnings
  if (filters.hasErrors) f.hasErrors = filters.hasErrors
  if (filters.q.trim()) f.q = filters.q.trim()
  return f
}

function queryForApi(filters: LimitFilters, sortBy: SortItem[], page: number, pageSize: number): LimitListQuery {
  return { ...filters, sort: sortParam(sortBy) || undefined, page, pageSize }
}

/**
 * The list request the register screen makes for a URL query: the router asks for it on first load while the
 * screen's code is still loading (docs/architecture.md#first-load), so both must build it the same way.
 */
export function registerListQuery(query: LocationQuery): LimitListQuery {
  const state = stateFrom(query)
  return queryForApi(filtersForApi(state.filters), state.sortBy, state.page, state.pageSize)
}

/** The processes the register's process filter offers: those of the chosen sites and areas (all when none). */
export function registerProcessQuery(filters: { siteId?: number[]; areaId?: number[] }): ProcessListQuery {
  return {
    siteId: filters.siteId?.length ? filters.siteId : undefined,
    areaId: filters.areaId?.length ? filters.areaId : undefined,
  }
}

/**
 * The register's filters, sort, page and page size, kept in the URL query so that a reload or a shared link shows the
 * same page. Edits replace the current history entry; a changed URL (e.g. the navigation link) is read back.
 */
export function useRegisterQuery() {
  const route = useRoute()
  const router = useRouter()
  const filters = reactive(emptyFilters())
  const sortBy = ref<SortItem[]>([])
  const page = ref(1)
  const pageSize = ref(DEFAULT_PAGE_SIZE)

  function readFrom(query: LocationQuery) {
    const next = stateFrom(query)
    Object.assign(filters, next.filters)
    sortBy.value = next.sortBy
    page.value = next.page
    pageSize.value = next.pageSize
  }

  /** The filters as the API takes them (empty ones left out). */
  const apiFilters = computed<LimitFilters>(() => filtersForApi(filters))

  const apiQuery = computed<LimitListQuery>(() =>
    queryForApi(apiFilters.value, sortBy.value, page.value, pageSize.value),
  )

  function toLocation(): LocationQueryRaw {
    const q: LocationQueryRaw = {}
    for (const [k, v] of Object.entries(apiQuery.value)) {
      if (v === undefined || v === '' || (k === 'page' && v === 1) || (k === 'pageSize' && v === DEFAULT_PAGE_SIZE))
        continue
      q[k] = Array.isArray(v) ? v.map(String) : String(v)
    }
    return q
  }

  const key = (q: LocationQuery | LocationQueryRaw) =>
    JSON.stringify(
      Object.keys(q)
        .sort()
        .map((k) => [k, list(q[k] as LocationQuery[string])]),
    )

  readFrom(route.query)
  let readKey = JSON.stringify(apiFilters.value)

  // Any change of the filters by the user starts again at page 1; filters read from the URL keep its page.
  watch(
    () => JSON.stringify(apiFilters.value),
    (k) => {
      if (k !== readKey) page.value = 1
      readKey = k
    },
  )

  /** Writes the state into the URL without a new history entry. */
  function sync() {
    const next = toLocation()
    if (key(next) !== key(route.query)) void router.replace({ query: next })
  }

  // A URL changed from outside (navigation link, back to a replaced entry): take it over.
  watch(
    () => route.query,
    (q) => {
      if (route.name === 'register' && key(q) !== key(toLocation())) {
        readFrom(q)
        readKey = JSON.stringify(apiFilters.value)
      }
    },
  )

  function clearFilters() {
    Object.assign(filters, emptyFilters())
    page.value = 1
  }

  return { filters, sortBy, page, pageSize, apiFilters, apiQuery, sync, clearFilters }
}

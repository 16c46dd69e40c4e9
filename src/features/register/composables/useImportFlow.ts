import { useAbility } from '@casl/vue'
import { computed, onMounted, type Ref, ref, watch } from 'vue'
import type { AppAbility } from '@shared/abilities/index.ts'
import type { ImportError } from '@shared/schemas/imports.ts'
import { IMPORT_MAX_BYTES } from '@shared/schemas/imports.ts'
import { isApiError, messageOf } from '@/api/errors'
import { useSitesStore } from '@/stores/sites'
import { duplicateColumns, type ImportLayout, mappingHelpers, sameMapping } from '../import-mapping'
import { onSite } from '../site-subject'

// The steps of a spreadsheet import screen (the register, the history): site and file, column mapping, the dry run's
// check, the commit. The server does the work; this keeps the screen's state and its answers.

export type ImportStep = 1 | 2 | 3 | 4

/** What a dry run and a commit answer, as far as the steps need it. */
export interface ImportAnswer {
  id: number
  mapping: Record<string, string>
  errors: ImportError[]
  rows: unknown[]
  summary: unknown
}

export interface ImportFlowOptions<R extends ImportAnswer, M extends Record<string, string>> {
  layout: ImportLayout
  upload: (input: { file: File; siteId: number; mapping?: M }, onProgress: (p: number) => void) => Promise<R>
  commit: (id: number) => Promise<R>
  /** Rows the commit would write, from a dry run's answer. */
  writable: (r: R) => number
}

export const IMPORT_ACCEPT = '.csv,.xlsx,text/csv,application/vnd.openxmlformats-officedocument.spreadsheetml.sheet'
export const IMPORT_MAX_MB = IMPORT_MAX_BYTES / 1024 / 1024

export function useImportFlow<R extends ImportAnswer, M extends Record<string, string>>(o: ImportFlowOptions<R, M>) {
  const sites = useSitesStore()
  const { can } = useAbility<AppAbility>()
  const helpers = mappingHelpers(o.layout)

  const step = ref<ImportStep>(1)
  const siteId = ref<number | null>(null)
  const file = ref<File | null>(null)
  /** Upload progress 0…1 while the file is on its way; null when no upload runs. */
  const progress = ref<number | null>(null)
  const uploadError = ref('')
  const mappingError = ref('')
  const headers = ref<string[]>([])
  const mapping = ref({} as M) as Ref<M>
  /** The mapping the shown check result was made with. */
  const checkedMapping = ref({} as M)
  const result = ref<R | null>(null)
  const committing = ref(false)
  const commitError = ref('')
  const committed = ref<R | null>(null)

  const siteItems = computed(() =>
    sites.sites
      .filter((s) => can('import', onSite('Limit', s.id)))
      .map((s) => ({ title: `${s.code} · ${s.name}`, value: s.id })),
  )
  onMounted(async () => {
    await sites.load().catch(() => undefined)
    if (!siteId.value && siteItems.value.length === 1) siteId.value = siteItems.value[0].value
  })
  const siteCode = computed(() => (siteId.value ? sites.codeOf(siteId.value) : ''))

  const fileProblem = computed(() => {
    if (!file.value) return ''
    if (file.value.size === 0) return 'The file is empty'
    if (file.value.size > IMPORT_MAX_BYTES)
      return (
        `The file is ${(file.value.size / 1024 / 1024).toFixed(1)} MB; ` +
        `the largest import is ${IMPORT_MAX_MB} MB: ${o.layout.splitHint}`
      )
    return ''
  })
  const uploading = computed(() => progress.value !== null)
  const canUpload = computed(() => !!siteId.value && !!file.value && !fileProblem.value && !uploading.value)

  function fileChosen(v: File | File[] | null | undefined) {
    file.value = (Array.isArray(v) ? v[0] : v) ?? null
    uploadError.value = ''
  }
  // Another site or file starts over.
  watch([siteId, file], () => {
    result.value = null
    headers.value = []
    mapping.value = {} as M
    checkedMapping.value = {} as M
    committed.value = null
  })

  // the server's complaint about the columns holds for the mapping it saw, not for one changed since
  const mappingErrorFor = ref({} as M)
  const shownMappingError = computed(() =>
    mappingError.value && sameMapping(mapping.value, mappingErrorFor.value) ? mappingError.value : '',
  )
  const mappingMissing = computed(() => helpers.missingRequired(mapping.value))
  const mappingClashes = computed(() => duplicateColumns(mapping.value).size)
  const mappingChanged = computed(() => !result.value || !sameMapping(mapping.value, checkedMapping.value))

  /**
   * Uploads the file for a dry run, with the chosen mapping from the mapping step; the server answers what each row
   * would do.
   */
  async function check(withMapping: boolean) {
    if (!siteId.value || !file.value) return
    uploadError.value = ''
    mappingError.value = ''
    commitError.value = ''
    progress.value = 0
    const sent = withMapping ? { ...mapping.value } : undefined
    try {
      const res = await o.upload({ file: file.value, siteId: siteId.value, mapping: sent }, (p) => {
        progress.value = p
      })
      result.value = res
      headers.value = Object.keys(res.mapping)
      mapping.value = { ...res.mapping } as M
      checkedMapping.value = { ...res.mapping } as M
      step.value = withMapping ? 3 : 2
    } catch (e) {
      const details = isApiError(e) ? (e.details as { headers?: unknown; mapping?: unknown }) : {}
      if (isApiError(e) && e.status === 400 && Array.isArray(details.headers)) {
        // the file was read but its columns do not fit: the mapping step shows what the server saw
        result.value = null
        headers.value = (details.headers as unknown[]).filter((h): h is string => typeof h === 'string' && h !== '')
        mapping.value = { ...((details.mapping as M | undefined) ?? {}) } as M
        checkedMapping.value = {} as M
        mappingErrorFor.value = { ...mapping.value }
        mappingError.value = messageOf(e)
        step.value = 2
      } else if (step.value === 2) {
        mappingErrorFor.value = { ...mapping.value }
        mappingError.value = messageOf(e)
      } else {
        uploadError.value = messageOf(e)
      }
    } finally {
      progress.value = null
    }
  }

  function continueFromMapping() {
    if (mappingChanged.value) void check(true)
    else step.value = 3
  }

  const writable = computed(() => (result.value ? o.writable(result.value) : 0))
  const canCommit = computed(
    () => !!result.value && !result.value.errors.length && writable.value > 0 && !committing.value,
  )

  async function commit() {
    if (!result.value) return
    committing.value = true
    commitError.value = ''
    try {
      committed.value = await o.commit(result.value.id)
      step.value = 4
    } catch (e) {
      commitError.value = messageOf(e)
      // a commit checks the rows again: problems found now replace the dry run's answer
      const details: Partial<ImportAnswer> = isApiError(e) ? (e.details as Partial<ImportAnswer>) : {}
      if (isApiError(e) && e.status === 422 && result.value && Array.isArray(details.errors)) {
        result.value = {
          ...result.value,
          errors: details.errors,
          rows: details.rows ?? result.value.rows,
          summary: details.summary ?? result.value.summary,
        } as R
      }
    } finally {
      committing.value = false
    }
  }

  function startOver() {
    file.value = null
    step.value = 1
    uploadError.value = ''
  }

  return {
    step,
    siteId,
    siteItems,
    siteCode,
    file,
    fileProblem,
    fileChosen,
    progress,
    uploading,
    canUpload,
    uploadError,
    headers,
    mapping,
    shownMappingError,
    mappingMissing,
    mappingClashes,
    mappingChanged,
    check,
    continueFromMapping,
    result,
    writable,
    canCommit,
    committing,
    commitError,
    committed,
    commit,
    startOver,
  }
}

export const IMPORT_STEPS = [
  { value: 1, title: 'File' },
  { value: 2, title: 'Columns' },
  { value: 3, title: 'Check' },
  { value: 4, title: 'Import' },
] as const

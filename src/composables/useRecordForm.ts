import { computed, type Ref, ref, shallowRef, watch } from 'vue'
import type { z } from 'zod'
import { isApiError, messageOf, type ApiError } from '@/api/errors'
import { issuesToFields } from '@/features/register/form-errors'
import { useSitesStore } from '@/stores/sites'

// A record's create/edit form: the record loaded for editing (or the only site chosen for a new one), the live check
// with the shared schema once a save was tried, the save with its busy state, and the server's answer mapped onto the
// fields. The view keeps its own form object and says how a record fills it and how the form becomes the input.

export interface RecordFormOptions<Rec, S extends z.ZodType> {
  /** The id of the record to edit; null for a new one. */
  editId: Ref<number | null>
  schema: S
  /** The form as the API takes it (before the schema). */
  toInput: () => unknown
  /** Messages for a field left empty (a picker), by key. */
  missing?: Record<string, string>
  /** Loads the record to edit (a form that only creates has none). */
  load?: (id: number) => Promise<Rec>
  /** Fills the form from the loaded record. */
  fill?: (rec: Rec) => void | Promise<void>
  /** A new record's form with the only site the user has (when there is one). */
  chooseSite: (siteId: number) => void
  /** Creates the record, or saves the edited one. */
  submit: (input: z.output<S>, editing: Rec | null) => Promise<unknown>
  /** What the server's refusal says beyond its field messages (e.g. a check's findings). */
  onRefused?: (e: ApiError) => void
}

export function useRecordForm<Rec, S extends z.ZodType>(o: RecordFormOptions<Rec, S>) {
  const sites = useSitesStore()
  const editing = shallowRef<Rec | null>(null)
  const errors = ref<Record<string, string[]>>({})
  const formError = ref('')
  const loadError = ref('')
  const saving = ref(false)
  const tried = ref(false)

  const parsed = computed(() => o.schema.safeParse(o.toInput()))
  watch(parsed, (p) => {
    if (tried.value) errors.value = p.success ? {} : issuesToFields(p.error.issues, o.missing)
  })

  async function loadForEdit(id: number) {
    if (!o.load) return
    try {
      const rec = await o.load(id)
      editing.value = rec
      await sites.load()
      await o.fill?.(rec)
    } catch (e) {
      loadError.value = messageOf(e)
    }
  }
  watch(
    o.editId,
    (id) => {
      if (id) void loadForEdit(id)
      else
        void sites.load().then(() => {
          if (sites.sites.length === 1) o.chooseSite(sites.sites[0].id)
        })
    },
    { immediate: true },
  )

  async function save() {
    tried.value = true
    formError.value = ''
    const p = parsed.value
    if (!p.success) {
      errors.value = issuesToFields(p.error.issues, o.missing)
      formError.value = 'Some fields need attention'
      return
    }
    errors.value = {}
    saving.value = true
    try {
      await o.submit(p.data, editing.value)
    } catch (e) {
      formError.value = messageOf(e)
      if (isApiError(e)) {
        errors.value = e.fields
        o.onRefused?.(e)
      }
    } finally {
      saving.value = false
    }
  }

  return { editing, errors, formError, loadError, saving, parsed, save }
}

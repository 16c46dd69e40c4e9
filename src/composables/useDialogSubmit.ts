import { ref } from 'vue'
import { isApiError, messageOf } from '@/api/errors'

// What a record dialog keeps while it submits: busy while the request runs, the sentence of the last refusal and
// the messages per field the API sent with it (shown at the fields, AppFormDialog shows the sentence).

export function useDialogSubmit() {
  const busy = ref(false)
  const error = ref('')
  const fields = ref<Record<string, string[]>>({})

  function clear() {
    error.value = ''
    fields.value = {}
  }
  /** Runs one submission; a refusal fills `error` and `fields` and resolves false. */
  async function submit(action: () => Promise<unknown>): Promise<boolean> {
    clear()
    busy.value = true
    try {
      await action()
      return true
    } catch (e) {
      error.value = messageOf(e)
      if (isApiError(e)) fields.value = e.fields
      return false
    } finally {
      busy.value = false
    }
  }
  return { busy, error, fields, clear, submit }
}

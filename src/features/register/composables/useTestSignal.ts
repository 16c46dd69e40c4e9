import { computed, ref, type Ref } from 'vue'
import type { TestSignal } from '@shared/domain/test-signal.ts'
import { type SignalMode, askTestSignal, signalRefusal } from '../test-signal'

/**
 * What a test-signal panel (the limit page's, the trip-test form's) shows for the mode and cold junction chosen
 * (docs/domain/test-signals.md): `ask` sends the request (GET /api/limits/:id/test-signal) and shows its answer or
 * refusal; `refuse` shows the cold junction's messages and no answer. An answer that a later `ask` or `refuse`
 * overtook is dropped.
 */
export function useTestSignal(o: {
  limitId: () => number
  signalKind: () => string | null
  mode: Ref<SignalMode>
  coldJunction: Ref<string>
}) {
  const isThermocouple = computed(() => o.signalKind() === 'thermocouple')
  const result = ref<TestSignal | null>(null)
  const loading = ref(false)
  const fieldError = ref<string[]>([])
  const error = ref('')
  let requestNo = 0

  function refuse(field: string[] = []) {
    requestNo++
    result.value = null
    loading.value = false
    fieldError.value = field
    error.value = ''
  }

  async function ask() {
    const mine = ++requestNo
    fieldError.value = []
    error.value = ''
    loading.value = true
    try {
      const r = await askTestSignal(o.limitId(), isThermocouple.value, o.mode.value, o.coldJunction.value.trim())
      if (mine === requestNo) result.value = r
    } catch (e) {
      if (mine !== requestNo) return
      result.value = null
      ;({ field: fieldError.value, message: error.value } = signalRefusal(e))
    } finally {
      if (mine === requestNo) loading.value = false
    }
  }

  return { isThermocouple, result, loading, fieldError, error, ask, refuse }
}

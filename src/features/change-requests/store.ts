import { defineStore } from 'pinia'
import { ref } from 'vue'
import { getWaitingCount } from './api'

/** The "waiting for me" counter of the navigation; views refresh it after acting on a request. */
export const useChangeWaitingStore = defineStore('changeWaiting', () => {
  const count = ref(0)
  let pending: Promise<void> | null = null

  async function refresh() {
    pending ??= (async () => {
      try {
        count.value = (await getWaitingCount()).count
      } catch {
        // the counter is a convenience: a failed poll keeps the last value
      } finally {
        pending = null
      }
    })()
    return pending
  }

  function reset() {
    count.value = 0
  }
  return { count, refresh, reset }
})

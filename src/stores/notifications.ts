import { defineStore } from 'pinia'
import { ref } from 'vue'
import { messageOf } from '@/api/errors'

export interface Notice {
  id: number
  text: string
  color: 'success' | 'error' | 'info' | 'warning'
}

/** A queue of short messages shown in the snackbar. */
export const useNotificationsStore = defineStore('notifications', () => {
  const items = ref<Notice[]>([])
  let next = 1
  function push(text: string, color: Notice['color'] = 'info') {
    items.value.push({ id: next++, text, color })
  }
  function success(text: string) {
    push(text, 'success')
  }
  function error(e: unknown) {
    push(messageOf(e), 'error')
  }
  function dismiss(id: number) {
    items.value = items.value.filter((n) => n.id !== id)
  }
  return { items, push, success, error, dismiss }
})

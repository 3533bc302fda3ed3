import { defineStore } from 'pinia'
import { shallowRef } from 'vue'

export interface Notice {
  kind: 'done' | 'problem' | 'info'
  message: string
}

/** One short message at a time ("Saved slot 4. Next: slot 5."), shown by the layout and read out politely. */
export const useNoticeStore = defineStore('notice', () => {
  const current = shallowRef<Notice | null>(null)
  let timer: ReturnType<typeof setTimeout> | undefined

  function show(notice: Notice, timeoutMs = 3000) {
    clearTimeout(timer)
    current.value = notice
    timer = setTimeout(() => (current.value = null), timeoutMs)
  }
  function dismiss() {
    clearTimeout(timer)
    current.value = null
  }

  return { current, show, dismiss }
})

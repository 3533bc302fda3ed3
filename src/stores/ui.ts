import { defineStore } from 'pinia'
import { ref, watch } from 'vue'
import { Dark, LocalStorage } from 'quasar'

export type ThemeChoice = 'auto' | 'light' | 'dark'

/** Display preferences kept on the device: theme (vault work at night wants dark) and high contrast. */
export const useUiStore = defineStore('ui', () => {
  const theme = ref<ThemeChoice>(LocalStorage.getItem<ThemeChoice>('ls.theme') ?? 'auto')
  const highContrast = ref<boolean>(LocalStorage.getItem<boolean>('ls.highContrast') ?? false)

  function apply() {
    Dark.set(theme.value === 'auto' ? 'auto' : theme.value === 'dark')
    document.body.classList.toggle('ls-high-contrast', highContrast.value)
  }

  watch(theme, (value) => LocalStorage.set('ls.theme', value))
  watch(highContrast, (value) => LocalStorage.set('ls.highContrast', value))
  watch([theme, highContrast], apply, { immediate: true })

  return { theme, highContrast }
})

import { ref } from 'vue'
import { registerSW } from 'virtual:pwa-register'

/** True once a new version of the app is downloaded and waiting; the UI decides when to reload. */
export const updateReady = ref(false)
/** The service worker's state as the shell sees it. */
export const workerState = ref<'unsupported' | 'registering' | 'registered' | 'failed'>('registering')

let applyUpdate: ((reload?: boolean) => Promise<void>) | undefined

/** Reloads into the waiting version; callers make sure no input is unsaved first. */
export function reloadToUpdate(): Promise<void> {
  return applyUpdate ? applyUpdate(true) : Promise.resolve()
}

/** Registers the generated service worker and watches for updates. */
export function bootPwa(): void {
  if (!('serviceWorker' in navigator)) {
    workerState.value = 'unsupported'
    return
  }
  applyUpdate = registerSW({
    immediate: true,
    onNeedRefresh() {
      updateReady.value = true
    },
    onRegisteredSW(_url, registration) {
      workerState.value = 'registered'
      document.documentElement.dataset.sw = 'registered'
      // Installed apps on iOS only look for updates when asked.
      document.addEventListener('visibilitychange', () => {
        if (document.visibilityState === 'visible') void registration?.update()
      })
    },
    onRegisterError() {
      workerState.value = 'failed'
    },
  })
}

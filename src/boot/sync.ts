import { ref, shallowRef, watch } from 'vue'
import { openDeviceDb, type DeviceDb } from '@/idb/db'
import { queuedCount } from '@/idb/reads'
import { createSyncEngine, type SyncEngine, type SyncStatus } from '@/sync/engine'
import { useSessionStore } from '@/stores/session'

/** The signed-in user's device database and its sync engine; null while nobody is signed in. */
export const device = shallowRef<{ db: DeviceDb; engine: SyncEngine } | null>(null)

/** The engine's last status report, for the header indicator. */
export const syncStatus = ref<SyncStatus>({
  state: 'idle',
  queued: 0,
  rejected: 0,
  lastSyncAt: null,
  lastError: null,
  clockOffsetMs: null,
})

/** Edits waiting for the server right now (0 when no database is open). */
export async function queuedNow(): Promise<number> {
  return device.value ? queuedCount(device.value.db) : 0
}

async function open(userId: string) {
  const session = useSessionStore()
  const db = await openDeviceDb(userId)
  const engine = createSyncEngine({
    db,
    baseUrl: '',
    fetch: (url, init) => fetch(url, init),
    getAccessToken: () => session.currentToken(),
    refreshAccessToken: () => session.refresh(),
    onStatus: (status) => {
      syncStatus.value = status
    },
  })
  device.value = { db, engine }
  engine.start()
}

async function close() {
  const current = device.value
  device.value = null
  if (!current) return
  await current.engine.stop()
  // Closed, never deleted: queued work waits on the device for the same user's next sign-in.
  current.db.close()
}

/** Opens the device database and starts sync when someone signs in; stops both on sign-out. */
export function bootSync(): void {
  const session = useSessionStore()
  let chain = Promise.resolve()
  watch(
    () => session.user?.id ?? null,
    (userId, previous) => {
      if (userId === previous) return
      chain = chain
        .then(close)
        .then(() => (userId ? open(userId) : undefined))
        .catch((error: unknown) => console.error('Could not open the device database', error))
    },
    { immediate: true },
  )
  // A fresh token after a refused refresh: sync at once rather than on the next timer.
  watch(
    () => session.accessToken,
    (token, old) => {
      if (token && !old) void device.value?.engine.syncNow()
    },
  )
}

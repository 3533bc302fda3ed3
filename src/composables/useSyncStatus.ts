import { computed } from 'vue'
import { device, syncStatus } from '@/boot/sync'
import { exportRejected, overwrittenList, queuedCount, rejectedList } from '@/idb/reads'
import { useSessionStore } from '@/stores/session'
import { useLiveQuery } from './useLiveQuery'

export type SyncTone = 'ok' | 'info' | 'warn' | 'bad'

function hhmm(iso: string): string {
  return new Date(iso).toLocaleTimeString([], { hour: '2-digit', minute: '2-digit', hour12: false })
}

/** The sync state in words for the header, plus the refused and overwritten edits for the details. */
export function useSyncStatus() {
  const session = useSessionStore()
  const db = () => device.value?.db
  // Read from the database too: a write in this tab shows as queued before the engine reports.
  const queued = useLiveQuery(async () => {
    const current = db()
    return current ? queuedCount(current) : 0
  }, [device])
  const rejected = useLiveQuery(async () => {
    const current = db()
    return current ? rejectedList(current) : []
  }, [device])
  const overwritten = useLiveQuery(async () => {
    const current = db()
    return current ? overwrittenList(current) : []
  }, [device])

  const status = computed(() => ({
    ...syncStatus.value,
    queued: queued.value.value ?? syncStatus.value.queued,
  }))

  const summary = computed<{ text: string; tone: SyncTone; state: string }>(() => {
    const { state, lastSyncAt } = syncStatus.value
    const waiting = status.value.queued
    const refused = rejected.value.value?.length ?? 0
    if (session.needsSignIn || state === 'needsSignIn')
      return { text: 'Sign in to sync', tone: 'bad', state: 'signin' }
    if (refused > 0) return { text: `${refused} refused`, tone: 'bad', state: 'problem' }
    if (state === 'error') return { text: 'Sync problem', tone: 'bad', state: 'problem' }
    if (state === 'offline') {
      return { text: waiting > 0 ? `Offline · ${waiting} queued` : 'Offline', tone: 'warn', state: 'offline' }
    }
    if (waiting > 0) return { text: `${waiting} queued`, tone: 'info', state: 'queued' }
    if (state === 'syncing') return { text: 'Syncing…', tone: 'info', state: 'syncing' }
    if (lastSyncAt) return { text: `Synced ${hhmm(lastSyncAt)}`, tone: 'ok', state: 'synced' }
    return { text: 'Not synced yet', tone: 'info', state: 'idle' }
  })

  async function syncNow() {
    return device.value?.engine.syncNow()
  }

  async function exportRefused(): Promise<string> {
    return device.value ? exportRejected(device.value.db) : '{}'
  }

  return {
    status,
    summary,
    rejected: computed(() => rejected.value.value ?? []),
    overwritten: computed(() => overwritten.value.value ?? []),
    syncNow,
    exportRefused,
  }
}

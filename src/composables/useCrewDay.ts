import { ref, shallowRef, watch } from 'vue'
import { api, failureMessage } from '@/api/http'
import { device } from '@/boot/sync'
import { useSessionStore } from '@/stores/session'

export interface DayClosure {
  closureId: string
  label: string
  state: string
  position: number
}
export interface DayMember {
  id: string
  name: string
  role: string
  closures: DayClosure[]
}
export interface ProductionRow {
  day: string
  splicerId: string
  splicerName: string
  splices: number
  resplices: number
  overTarget: number
  closures: number
}

const offlineWords =
  'Offline: the day plan and production need signal. Your reviews and sign-offs still work.'

/** The crew's day (who works which closures, in order) and today's production: online actions. */
export function useCrewDay() {
  const session = useSessionStore()
  const members = shallowRef<DayMember[]>([])
  const closures = shallowRef<{ id: string; label: string; state: string }[]>([])
  const production = shallowRef<ProductionRow[]>([])
  const message = ref<string | null>(null)
  const saving = ref<string | null>(null)
  const today = new Date().toISOString().slice(0, 10)
  /** The day production is shown for (UTC day of the device time, as the server counts it). */
  const date = ref(today)
  let projectIds: string[] = []

  async function load() {
    const crewId = session.user?.crewId
    if (!crewId) {
      message.value = 'You are not in a crew.'
      return
    }
    const db = device.value?.db
    const onDevice = db ? (await db.closures.toArray()).filter((c) => !c.deleted) : []
    closures.value = onDevice
      .map(({ id, label, state }) => ({ id, label, state }))
      .sort((a, b) => a.label.localeCompare(b.label))
    if (!navigator.onLine) {
      message.value = offlineWords
      return
    }
    try {
      const day = (await api('GET', `/api/crews/${crewId}/day`)) as { members: DayMember[] }
      members.value = day.members
      projectIds = [...new Set(onDevice.map((c) => c.projectId))]
      await loadProduction()
      message.value = null
    } catch (error) {
      message.value = failureMessage(error)
    }
  }

  async function loadProduction() {
    const rows: ProductionRow[] = []
    for (const projectId of projectIds) {
      const answer = (await api('GET', `/api/projects/${projectId}/production`, {
        query: { from: date.value },
      })) as { items: ProductionRow[] }
      rows.push(...answer.items)
    }
    production.value = rows
  }
  watch(date, () => {
    if (!navigator.onLine) return void (message.value = offlineWords)
    loadProduction().catch((error: unknown) => (message.value = failureMessage(error)))
  })

  /** Saves one member's ordered list; resolves an error message, or null when saved. */
  async function save(userId: string, closureIds: string[]): Promise<string | null> {
    const crewId = session.user?.crewId
    if (!crewId) return 'You are not in a crew.'
    if (!navigator.onLine) return offlineWords
    saving.value = userId
    try {
      const day = (await api('PUT', `/api/crews/${crewId}/day`, { json: { userId, closureIds } })) as {
        members: DayMember[]
      }
      members.value = day.members
      void device.value?.engine.syncNow()
      return null
    } catch (error) {
      return failureMessage(error)
    } finally {
      saving.value = null
    }
  }

  void load()
  return { members, closures, production, message, saving, today, date, load, save }
}

import { computed, onScopeDispose, ref, shallowRef, toValue, watch, type MaybeRefOrGetter } from 'vue'
import { LocalStorage } from 'quasar'
import { reviewItems, signOffChecklist, type ReviewVerdict } from '#shared/domain/review'
import type { PhotoCounts } from '#shared/domain/rollup'
import { defaultPhotoRules, defaultProjectLimits } from '#shared/schemas/project'
import { api, failureMessage } from '@/api/http'
import { device } from '@/boot/sync'
import type { DeviceDb } from '@/idb/db'
import type { CableRow, ClosureRow, NoteRow, PhotoLinkRow, SpliceRow } from '@/idb/schema'
import { reopenClosure, reviewSplice, signOffClosure } from '@/idb/writes'
import { useSessionStore } from '@/stores/session'
import { TransportError } from '@/sync/transport'
import { useLiveQuery } from './useLiveQuery'

/** A crew member as the foreman's screens name them. */
export interface CrewMember {
  id: string
  name: string
  role: string
}

function live<T>(read: (db: DeviceDb) => Promise<T>, deps: MaybeRefOrGetter<unknown>[] = []) {
  const { value } = useLiveQuery(async () => {
    const db = device.value?.db
    return db ? read(db) : undefined
  }, [device, ...deps.map((dep) => () => toValue(dep))])
  return value
}

/** Everything the device holds about one closure, superseded attempts included. */
export interface ClosureRecord {
  closure: ClosureRow
  limits: typeof defaultProjectLimits
  photoRules: typeof defaultPhotoRules
  trays: { id: string; number: number; capacity: number }[]
  planRows: {
    trayId: string
    slot: number
    cableAId: string
    fiberA: number
    cableBId: string
    fiberB: number
  }[]
  /** Every live attempt, current or superseded. */
  attempts: SpliceRow[]
  cables: CableRow[]
  notes: NoteRow[]
  photoLinks: PhotoLinkRow[]
}

/** Reads one closure's whole record from the device database (null when it is not on this device). */
export async function readClosureRecord(db: DeviceDb, closureId: string): Promise<ClosureRecord | null> {
  const closure = await db.closures.get(closureId)
  if (!closure || closure.deleted) return null
  const [project, trays, planRows, splices] = await Promise.all([
    db.projects.get(closure.projectId),
    db.trays.where('closureId').equals(closureId).toArray(),
    db.planRows.where('closureId').equals(closureId).toArray(),
    db.splices.where('closureId').equals(closureId).toArray(),
  ])
  const attempts = splices.filter((row) => !row.deleted)
  const liveTrays = trays.filter((row) => !row.deleted).sort((a, b) => a.number - b.number)
  const targets: [string, string][] = [
    ['closure', closureId],
    ...liveTrays.map((tray) => ['tray', tray.id] as [string, string]),
    ...attempts.map((splice) => ['splice', splice.id] as [string, string]),
  ]
  const [links, notes, cables] = await Promise.all([
    db.photoLinks.where('[entity+entityId]').anyOf(targets).toArray(),
    db.notes
      .where('[entity+entityId]')
      .anyOf(targets.filter(([entity]) => entity !== 'tray'))
      .toArray(),
    db.cables.where('projectId').equals(closure.projectId).toArray(),
  ])
  return {
    closure,
    limits: project?.limits ?? defaultProjectLimits,
    photoRules: project?.photoRules ?? defaultPhotoRules,
    trays: liveTrays,
    planRows: planRows.filter((row) => !row.deleted),
    attempts,
    cables: cables.filter((cable) => !cable.deleted),
    notes: notes.filter((note) => !note.deleted).sort((a, b) => a.createdAt.localeCompare(b.createdAt)),
    photoLinks: links.filter((link) => !link.deleted),
  }
}

/** Photos per splice, per tray and of the closure, as the shared roll-up counts them. */
export function photoCountsOf(links: readonly PhotoLinkRow[]): PhotoCounts {
  const perSplice: Record<string, number> = {}
  const perTray: Record<string, number> = {}
  let closure = 0
  for (const link of links) {
    if (link.entity === 'splice') perSplice[link.entityId] = (perSplice[link.entityId] ?? 0) + 1
    else if (link.entity === 'tray') perTray[link.entityId] = (perTray[link.entityId] ?? 0) + 1
    else closure += 1
  }
  return { perSplice, perTray, closure }
}

/** The review of a closure record: checklist, flagged splices and roll-up, from the shared library. */
export function reviewOf(record: ClosureRecord) {
  const splices = record.attempts.map((splice) => ({ ...splice, reviewState: splice.reviewState ?? null }))
  const checklist = signOffChecklist(record.planRows, splices, record.limits, {
    counts: photoCountsOf(record.photoLinks),
    rules: record.photoRules,
  })
  return { checklist, items: reviewItems(record.planRows, splices, record.limits) }
}

const rosterKey = (userId: string) => `ls.crew.${userId}`

/**
 * The crew's members by id, for names on the foreman's screens: fetched with the crew day when online
 * and remembered on the device, so the board still names people offline.
 */
export function useCrewRoster() {
  const session = useSessionStore()
  const userId = session.user?.id ?? ''
  const members = ref<CrewMember[]>(LocalStorage.getItem<CrewMember[]>(rosterKey(userId)) ?? [])
  async function refresh() {
    const crewId = session.user?.crewId
    if (!crewId || !navigator.onLine) return
    try {
      const day = (await api('GET', `/api/crews/${crewId}/day`)) as { members: CrewMember[] }
      members.value = day.members.map(({ id, name, role }) => ({ id, name, role }))
      LocalStorage.set(rosterKey(userId), members.value)
    } catch {
      // Offline or refused: the remembered list stands.
    }
  }
  void refresh()
  const nameOf = (id: string | null | undefined) =>
    (id && members.value.find((member) => member.id === id)?.name) ||
    (id === session.user?.id ? (session.user?.name ?? 'You') : 'Someone outside the crew')
  return { members, nameOf, refresh }
}

export interface BoardRow {
  closure: ClosureRow
  planned: number
  logged: number
  openFlags: number
  sentBack: number
  ready: boolean
  lastActivityAt: string | null
  splicerIds: string[]
}

/** The crew's closures on this device with progress, open flags, last activity and who works them. */
export function useCrewBoard() {
  const rows = live(async (db): Promise<BoardRow[]> => {
    const closures = (await db.closures.toArray()).filter((closure) => !closure.deleted)
    const assignments = (await db.closureAssignments.toArray()).filter((row) => !row.deleted)
    const out: BoardRow[] = []
    for (const closure of closures) {
      const record = await readClosureRecord(db, closure.id)
      if (!record) continue
      const { checklist, items } = reviewOf(record)
      const times = record.attempts.map((splice) => splice.splicedAt).sort()
      const splicerIds = new Set([
        ...assignments.filter((row) => row.closureId === closure.id).map((row) => row.userId),
        ...record.attempts.map((splice) => splice.splicerId),
      ])
      out.push({
        closure,
        planned: checklist.rollup.planned,
        logged: checklist.rollup.logged,
        openFlags: items.filter((item) => item.open).length,
        sentBack: items.filter((item) => item.splice.reviewState === 'sent_back').length,
        ready: checklist.ok,
        lastActivityAt: times.at(-1) ?? null,
        splicerIds: [...splicerIds],
      })
    }
    return out.sort((a, b) => a.closure.label.localeCompare(b.closure.label))
  })
  return { rows: computed(() => rows.value) }
}

/** One closure's record and review as the device holds them, and the foreman's offline actions on it. */
export function useClosureReview(closureId: MaybeRefOrGetter<string>) {
  const record = live((db) => readClosureRecord(db, toValue(closureId)), [closureId])
  const review = computed(() => (record.value ? reviewOf(record.value) : null))
  const busy = ref(false)

  async function run(action: (db: DeviceDb) => Promise<unknown>): Promise<string | null> {
    const db = device.value?.db
    if (!db) return 'The device database is not open.'
    busy.value = true
    try {
      await action(db)
      void device.value?.engine.syncNow()
      return null
    } catch (error) {
      return failureMessage(error)
    } finally {
      busy.value = false
    }
  }

  return {
    record,
    review,
    busy,
    review1: (id: string, verdict: ReviewVerdict, reason: string) =>
      run((db) => reviewSplice(db, { id, verdict, reason })),
    signOff: (note: string) => run((db) => signOffClosure(db, { closureId: toValue(closureId), note })),
    reopen: (reason: string) => run((db) => reopenClosure(db, { closureId: toValue(closureId), reason })),
  }
}

export interface RejectedChange {
  id: number
  name: string
  code: string
  message: string
  at: string
  userId: string
  closureId: string | null
  resolvedAt: string | null
  args?: Record<string, unknown>
}

/** Changes the server refused about one closure (online only), and the one action that applies one. */
export function useRejectedChanges(closureId: MaybeRefOrGetter<string>) {
  const items = shallowRef<RejectedChange[]>([])
  const message = ref<string | null>(null)
  const offlineMessage = 'Offline: changes the server refused show here once there is signal.'
  async function load() {
    if (!navigator.onLine) {
      message.value = offlineMessage
      return
    }
    try {
      const page = (await api('GET', '/api/sync/rejected', { query: { limit: 500 } })) as {
        items: RejectedChange[]
      }
      items.value = page.items.filter((item) => item.closureId === toValue(closureId))
      message.value = null
    } catch (error) {
      // The browser may still say it is online a moment after the signal went.
      const unreachable = error instanceof TransportError && error.kind !== 'signIn'
      message.value = unreachable ? offlineMessage : failureMessage(error)
    }
  }
  async function reapply(id: number): Promise<string | null> {
    if (!navigator.onLine) return 'Offline: applying a refused change needs signal. Try again when online.'
    try {
      const answer = (await api('POST', `/api/sync/rejected/${id}/reapply`, { json: {} })) as {
        result: { status: string; message?: string }
      }
      await load()
      void device.value?.engine.syncNow()
      return answer.result.status === 'rejected'
        ? `Still refused: ${answer.result.message ?? 'the server gave no reason'}`
        : null
    } catch (error) {
      return failureMessage(error)
    }
  }
  watch(() => toValue(closureId), load, { immediate: true })
  const onOnline = () => void load()
  window.addEventListener('online', onOnline)
  onScopeDispose(() => window.removeEventListener('online', onOnline))
  return { items, message, load, reapply }
}

/** Object URLs for photos: the device's own bytes first, else fetched from the server when online. */
export function usePhotoUrls(shas: () => readonly string[]) {
  const session = useSessionStore()
  const urls = ref<Record<string, string | null>>({})
  const made: string[] = []
  watch(
    shas,
    async (list) => {
      for (const sha of list) {
        if (sha in urls.value) continue
        urls.value = { ...urls.value, [sha]: null }
        let blob: Blob | null = null
        const local = await device.value?.db.photos.get(sha)
        if (local) blob = new Blob([local.bytes], { type: local.type })
        else if (navigator.onLine && session.accessToken) {
          const res = await fetch(`/api/photos/${sha}`, {
            headers: { Authorization: `Bearer ${session.accessToken}` },
          }).catch(() => null)
          if (res?.ok) blob = await res.blob()
        }
        if (!blob) continue
        const url = URL.createObjectURL(blob)
        made.push(url)
        urls.value = { ...urls.value, [sha]: url }
      }
    },
    { immediate: true },
  )
  onScopeDispose(() => made.forEach((url) => URL.revokeObjectURL(url)))
  return urls
}

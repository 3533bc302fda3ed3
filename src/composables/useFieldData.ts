import { computed, toValue, type MaybeRefOrGetter } from 'vue'
import { lossStatus } from '#shared/domain/acceptance'
import { samePair } from '#shared/domain/plan'
import { defaultProjectLimits, type ProjectLimits } from '#shared/schemas/project'
import type { SpliceMethod } from '#shared/schemas/enums'
import { device } from '@/boot/sync'
import type { DeviceDb } from '@/idb/db'
import { closureView, storageSummary, type StorageSummary } from '@/idb/reads'
import type {
  CableRow,
  ClosureRow,
  NoteRow,
  PlanRowRecord,
  ProjectRow,
  SpliceRow,
  TrayRow,
} from '@/idb/schema'
import { useLiveQuery } from './useLiveQuery'

/** Planned, logged and flagged counts of a set of plan rows and current splices. */
export interface Progress {
  planned: number
  logged: number
  flagged: number
  offPlan: number
}

export function progressOf(
  planRows: readonly PlanRowRecord[],
  splices: readonly SpliceRow[],
  limits: ProjectLimits,
): Progress {
  const bySlot = new Map(planRows.map((row) => [`${row.trayId}:${row.slot}`, row]))
  let flagged = 0
  let offPlan = 0
  for (const splice of splices) {
    const planned = bySlot.get(`${splice.trayId}:${splice.slot}`)
    const { status } = lossStatus(splice.lossDb, limits.estimate, splice, limits.attemptsBeforeAcceptWithFlag)
    if (!planned || !samePair(planned, splice)) offPlan += 1
    if (status === 'over_target' || status === 'over_maximum' || status === 'accepted_with_flag') flagged += 1
  }
  return { planned: planRows.length, logged: splices.length, flagged, offPlan }
}

export interface ClosureSummary {
  closure: ClosureRow
  progress: Progress
  /** Edits of this closure still waiting for the server. */
  queued: number
}

function live<T>(read: (db: DeviceDb) => Promise<T>, deps: MaybeRefOrGetter<unknown>[] = []) {
  const { value } = useLiveQuery(async () => {
    const db = device.value?.db
    return db ? read(db) : undefined
  }, [device, ...deps.map((dep) => () => toValue(dep))])
  return value
}

async function projectOf(db: DeviceDb, projectId: string): Promise<ProjectRow | undefined> {
  return db.projects.get(projectId)
}

/** Queued edits per closure: splice photos, notes and edits are counted with their splice's closure. */
async function queuedByClosure(db: DeviceDb): Promise<Map<string, number>> {
  const counts = new Map<string, number>()
  for (const { args } of await db.outbox.toArray()) {
    let closureId = typeof args.closureId === 'string' ? args.closureId : null
    if (!closureId && args.entity === 'closure') closureId = String(args.entityId)
    if (!closureId) {
      const spliceId = args.entity === 'splice' ? args.entityId : args.id
      closureId = typeof spliceId === 'string' ? ((await db.splices.get(spliceId))?.closureId ?? null) : null
    }
    if (closureId) counts.set(closureId, (counts.get(closureId) ?? 0) + 1)
  }
  return counts
}

/** The closures on this device (the user's crew's, pulled), each with its progress and queued edits. */
export function useClosureList() {
  const rows = live(async (db) => {
    const closures = (await db.closures.toArray()).filter((closure) => !closure.deleted)
    const queuedBy = await queuedByClosure(db)
    const projects = new Map((await db.projects.toArray()).map((project) => [project.id, project]))
    const summaries: ClosureSummary[] = []
    for (const closure of closures) {
      const view = await closureView(db, closure.id)
      if (!view) continue
      const limits = projects.get(closure.projectId)?.limits ?? defaultProjectLimits
      const queued = queuedBy.get(closure.id) ?? 0
      summaries.push({ closure, progress: progressOf(view.planRows, view.splices, limits), queued })
    }
    return summaries.sort((a, b) => a.closure.label.localeCompare(b.closure.label))
  })
  const storage = live(
    async (db): Promise<StorageSummary & { usage: number | null; quota: number | null }> => {
      // Dexie reads first: liveQuery tracks only what is read before the first foreign await.
      const summary = await storageSummary(db)
      const estimate = await navigator.storage?.estimate?.().catch(() => null)
      return { ...summary, usage: estimate?.usage ?? null, quota: estimate?.quota ?? null }
    },
  )
  return { closures: computed(() => rows.value), storage }
}

export interface ClosureData {
  closure: ClosureRow
  project: ProjectRow | undefined
  limits: ProjectLimits
  defaultMethod: SpliceMethod
  trays: TrayRow[]
  planRows: PlanRowRecord[]
  splices: SpliceRow[]
  cables: CableRow[]
  notes: NoteRow[]
}

/** One closure with its project, trays, plan, current splices, the cables its plan uses and its notes. */
export function useClosure(closureId: MaybeRefOrGetter<string>) {
  return live(
    async (db): Promise<ClosureData | null> => {
      const view = await closureView(db, toValue(closureId))
      if (!view) return null
      const project = await projectOf(db, view.closure.projectId)
      const cableIds = new Set<string>()
      for (const row of [...view.planRows, ...view.splices]) cableIds.add(row.cableAId).add(row.cableBId)
      const cables = (await db.cables.bulkGet([...cableIds])).filter(
        (cable): cable is CableRow => cable !== undefined && !cable.deleted,
      )
      const notes = (await db.notes.where('[entity+entityId]').equals(['closure', view.closure.id]).toArray())
        .filter((note) => !note.deleted)
        .sort((a, b) => a.createdAt.localeCompare(b.createdAt))
      return {
        ...view,
        project,
        limits: project?.limits ?? defaultProjectLimits,
        defaultMethod: project?.defaultMethod ?? 'single_fusion',
        cables,
        notes,
      }
    },
    [closureId],
  )
}

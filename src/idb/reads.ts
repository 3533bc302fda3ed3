import type { DeviceDb } from './db'
import type {
  ClosureRow,
  OverwrittenEntry,
  PhotoLinkRow,
  PlanRowRecord,
  RejectedEntry,
  SpliceRow,
  TrayRow,
} from './schema'

/** How many local edits wait for the server's answer. */
export function queuedCount(db: DeviceDb): Promise<number> {
  return db.outbox.count()
}

/** When the oldest edit still waiting for the server was made (device time), or null when none waits. */
export async function oldestQueuedAt(db: DeviceDb): Promise<string | null> {
  return (await db.outbox.orderBy('seq').first())?.clientTime ?? null
}

/** What the server refused, oldest first. */
export function rejectedList(db: DeviceDb): Promise<RejectedEntry[]> {
  return db.rejected.orderBy('seq').toArray()
}

/** The refused mutations as a JSON document the crew can send to the office. */
export async function exportRejected(db: DeviceDb): Promise<string> {
  const meta = await db.meta.get('device')
  const rejected = await rejectedList(db)
  return JSON.stringify({ clientId: meta?.clientId ?? null, userId: db.userId, rejected }, null, 2)
}

/** Merged edits where the server kept other values, oldest first. */
export function overwrittenList(db: DeviceDb): Promise<OverwrittenEntry[]> {
  return db.overwritten.orderBy('seq').toArray()
}

export interface StorageSummary {
  /** Rows per table. */
  counts: Record<string, number>
  photoBytes: number
  /** Bytes of photos the server does not have yet. */
  unsentPhotoBytes: number
}

/** Rows per table and photo bytes, for the settings page and the storage warning. */
export async function storageSummary(db: DeviceDb): Promise<StorageSummary> {
  const counts: Record<string, number> = {}
  for (const table of db.tables) counts[table.name] = await table.count()
  let photoBytes = 0
  let unsentPhotoBytes = 0
  await db.photos.each((photo) => {
    photoBytes += photo.size
    if (photo.uploaded === 0) unsentPhotoBytes += photo.size
  })
  return { counts, photoBytes, unsentPhotoBytes }
}

export interface ClosureView {
  closure: ClosureRow
  /** By tray number. */
  trays: TrayRow[]
  planRows: PlanRowRecord[]
  /** Current, not deleted attempts. */
  splices: SpliceRow[]
}

/** A closure with its trays, plan and current splices, read through the closureId indexes. */
export async function closureView(db: DeviceDb, closureId: string): Promise<ClosureView | null> {
  return db.transaction('r', [db.closures, db.trays, db.planRows, db.splices], async () => {
    const closure = await db.closures.get(closureId)
    if (!closure || closure.deleted) return null
    const [trays, planRows, splices] = await Promise.all([
      db.trays.where('closureId').equals(closureId).toArray(),
      db.planRows.where('closureId').equals(closureId).toArray(),
      db.splices.where('closureId').equals(closureId).toArray(),
    ])
    return {
      closure,
      trays: trays.filter((tray) => !tray.deleted).sort((a, b) => a.number - b.number),
      planRows: planRows.filter((row) => !row.deleted),
      splices: splices.filter((splice) => splice.isCurrent && !splice.deleted),
    }
  })
}

/** Every attempt logged in one tray slot (current or not), oldest attempt first. */
export async function slotHistory(db: DeviceDb, trayId: string, slot: number): Promise<SpliceRow[]> {
  const rows = await db.splices.where('[trayId+slot]').equals([trayId, slot]).toArray()
  return rows.filter((row) => !row.deleted).sort((a, b) => a.attempt - b.attempt)
}

/** The live photo links of a splice, tray or closure. */
export async function photoLinksOf(
  db: DeviceDb,
  entity: PhotoLinkRow['entity'],
  entityId: string,
): Promise<PhotoLinkRow[]> {
  const rows = await db.photoLinks.where('[entity+entityId]').equals([entity, entityId]).toArray()
  return rows.filter((row) => !row.deleted)
}

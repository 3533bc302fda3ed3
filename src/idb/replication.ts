import {
  type Mutation,
  type MutationResult,
  type PullResponse,
  syncedTables,
  type SyncedTable,
} from '#shared/schemas/sync'
import { deviceMeta, type DeviceDb } from './db'
import { replayOutbox, restoreRows } from './mutations'
import type { DeviceMeta, OutboxEntry } from './schema'

type Row = Record<string, unknown> & { id: string; serverSeq?: number }

export interface ApplyPullResult {
  /** Rows written (changes older than the stored row are skipped). */
  applied: number
  /** The stored cursor after this page. */
  cursor: number
}

/** Applies one pull page: changed rows, tombstones and the new cursor, then replays pending local edits. */
export async function applyPull(
  db: DeviceDb,
  response: PullResponse,
  options: { now?: () => number } = {},
): Promise<ApplyPullResult> {
  const now = options.now ?? Date.now
  // Guarantee: rows, cursor and replayed outbox commit together: no cursor past lost rows, no hidden edit.
  return db.transaction('rw', [...syncedTables, 'outbox', 'meta'], async () => {
    const meta = await deviceMeta(db)
    const byTable = new Map<SyncedTable, PullResponse['changes']>()
    for (const change of response.changes) {
      const list = byTable.get(change.table) ?? []
      list.push(change)
      byTable.set(change.table, list)
    }
    let applied = 0
    for (const [table, changes] of byTable) {
      const ids = [...new Set(changes.map((change) => change.id))]
      const stored = (await db.table(table).bulkGet(ids)) as (Row | undefined)[]
      const rows = new Map<string, Row>()
      ids.forEach((id, i) => {
        const row = stored[i]
        if (row) rows.set(id, row)
      })
      const writes = new Map<string, Row>()
      for (const change of changes) {
        const current = rows.get(change.id)
        // A change older than what is stored (a page re-read after a crash) must not undo a newer one.
        if (current && (current.serverSeq ?? 0) > change.serverSeq) continue
        const base = change.row ?? (change.deleted ? current : undefined)
        // A tombstone without its row, for a record never seen here: there is nothing to hide.
        if (!base) continue
        const row: Row = { ...base, id: change.id, serverSeq: change.serverSeq, deleted: change.deleted }
        rows.set(change.id, row)
        writes.set(change.id, row)
      }
      if (writes.size > 0) await db.table(table).bulkPut([...writes.values()])
      applied += writes.size
    }
    // A closure tombstone without its row means the closure left this user's scope: drop what hangs
    // under it too, so the device holds nothing the user may no longer read.
    for (const change of response.changes) {
      if (change.table === 'closures' && change.deleted && change.row === null)
        await dropClosure(db, change.id)
    }
    const cursor = Math.max(meta.cursor, response.cursor)
    await db.meta.update('device', { cursor, lastPullAt: new Date(now()).toISOString() })
    await replayOutbox(db, await db.outbox.toArray())
    return { applied, cursor }
  })
}

async function dropClosure(db: DeviceDb, closureId: string): Promise<void> {
  const spliceIds = (await db.splices.where('closureId').equals(closureId).primaryKeys()) as string[]
  const trayIds = (await db.trays.where('closureId').equals(closureId).primaryKeys()) as string[]
  const entities: [string, string][] = [
    ['closure', closureId],
    ...spliceIds.map((id) => ['splice', id] as [string, string]),
    ...trayIds.map((id) => ['tray', id] as [string, string]),
  ]
  await db.photoLinks.where('[entity+entityId]').anyOf(entities).delete()
  await db.notes.where('[entity+entityId]').anyOf(entities).delete()
  await db.splices.bulkDelete(spliceIds)
  await db.trays.bulkDelete(trayIds)
  await db.planRows.where('closureId').equals(closureId).delete()
  await db.closureAssignments.where('closureId').equals(closureId).delete()
  await db.closures.delete(closureId)
}

export interface SettleOutcome {
  /** Seqs the server applied, merged or had already applied: removed from the outbox. */
  settled: number[]
  /** Seqs the server refused: moved to `rejected`, their local effect undone. */
  rejected: number[]
  /** Seqs sent without an answer (after a gap, or a short answer): kept for the next push. */
  unanswered: number[]
  /** Set when the server reported a gap: the seq it expects next. */
  expectedSeq: number | null
}

/** Settles what the server answered for a pushed batch; entries without a final answer stay in the outbox. */
export async function settleResults(
  db: DeviceDb,
  sent: readonly Pick<Mutation, 'seq'>[],
  results: readonly MutationResult[],
  options: { now?: () => number } = {},
): Promise<SettleOutcome> {
  const at = new Date((options.now ?? Date.now)()).toISOString()
  const bySeq = new Map(results.map((result) => [result.seq, result]))
  const outcome: SettleOutcome = { settled: [], rejected: [], unanswered: [], expectedSeq: null }
  // Guarantee: an entry leaves the outbox only in the write storing its answer; refusals land in `rejected`.
  await db.transaction('rw', [...syncedTables, 'outbox', 'rejected', 'overwritten', 'meta'], async () => {
    const refused: OutboxEntry[] = []
    const accepted: OutboxEntry[] = []
    for (const { seq } of sent) {
      const result = bySeq.get(seq)
      const entry = await db.outbox.get(seq)
      if (!entry) continue
      if (!result || result.status === 'gap') {
        if (result?.expectedSeq !== undefined) outcome.expectedSeq = result.expectedSeq
        outcome.unanswered.push(seq)
        continue
      }
      if (result.status === 'rejected') {
        await db.rejected.put({
          seq,
          name: entry.name,
          args: entry.args,
          baseServerSeq: entry.baseServerSeq,
          clientTime: entry.clientTime,
          code: result.code ?? 'rejected',
          message: result.message ?? '',
          at,
        })
        refused.push(entry)
        outcome.rejected.push(seq)
      } else {
        if (result.overwritten && result.overwritten.length > 0) {
          await db.overwritten.put({
            seq,
            name: entry.name,
            args: entry.args,
            overwritten: result.overwritten,
            at,
          })
        }
        accepted.push(entry)
        outcome.settled.push(seq)
      }
      await db.outbox.delete(seq)
    }
    if (refused.length > 0) {
      // Newest first, each back to the rows it found; then every later edit the server took or has not
      // answered yet is laid on top again, so only the refused effects disappear.
      refused.sort((a, b) => b.seq - a.seq)
      for (const entry of refused) await restoreRows(db, entry.before)
      const oldest = refused[refused.length - 1]?.seq ?? 0
      const later = accepted.filter((entry) => entry.seq > oldest)
      await replayOutbox(db, [...later, ...(await db.outbox.toArray())])
    }
    const patch: Partial<DeviceMeta> = { lastPushAt: at }
    if (outcome.expectedSeq !== null) {
      patch.lastError = `Server expects seq ${outcome.expectedSeq}; resending from there.`
      console.warn(`sync: gap, server expects seq ${outcome.expectedSeq}`)
    }
    await db.meta.update('device', patch)
  })
  return outcome
}

/** Notes a push attempt that settled nothing; the entries keep their seqs and are resent as they are. */
export async function noteAttempt(
  db: DeviceDb,
  seqs: readonly number[],
  error: string | null,
  options: { reachedServer: boolean },
): Promise<void> {
  await db.outbox
    .where('seq')
    .anyOf([...seqs])
    .modify((entry) => {
      // 'sent' only says the outcome is unknown; a refused batch was never applied, so its state stays.
      if (options.reachedServer) entry.state = 'sent'
      entry.attempts += 1
      entry.lastError = error
    })
}

/** Updates the device meta row (sync bookkeeping only; seq and cursor move inside their own writes). */
export async function updateDeviceMeta(
  db: DeviceDb,
  patch: Partial<Pick<DeviceMeta, 'clockOffsetMs' | 'lastError' | 'lastPushAt' | 'lastPullAt'>>,
): Promise<void> {
  await db.meta.update('device', patch)
}

/** Marks a photo as stored on the server. */
export async function markPhotoUploaded(db: DeviceDb, sha256: string): Promise<void> {
  await db.photos.update(sha256, { uploaded: 1, lastError: null })
}

/** Records why a photo upload failed; it is retried next round. */
export async function notePhotoError(db: DeviceDb, sha256: string, error: string): Promise<void> {
  await db.photos
    .where('sha256')
    .equals(sha256)
    .modify((photo) => {
      photo.attempts += 1
      photo.lastError = error
    })
}

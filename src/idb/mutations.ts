import type { z } from 'zod'
import type { mutationArgsSchemas, MutationName, SyncedTable } from '#shared/schemas/sync'
import type { DeviceDb } from './db'
import type { OutboxEntry, RowSnapshot, SpliceRow } from './schema'

/** Mutation args after the shared schema parsed them (defaults filled in): what the outbox stores. */
export type ParsedArgs<N extends MutationName> = z.output<(typeof mutationArgsSchemas)[N]>

export interface RowRef {
  table: SyncedTable
  id: string
}

export interface EffectContext {
  seq: number
  clientTime: string
}

/** How one mutation shows on the device before the server has answered for it. */
export interface MutationSpec<N extends MutationName> {
  /** Record tables the local effect reads or writes. */
  tables: readonly SyncedTable[]
  /** Rules the schema cannot state; a message means the edit is refused before anything is written. */
  validate?: (args: ParsedArgs<N>) => string | null
  /** Local records the edit needs; the first is the record edited, whose serverSeq is the baseServerSeq. */
  requires: (args: ParsedArgs<N>) => RowRef[]
  /** Whether the mutation edits the first required record (else it creates, based on the cursor). */
  edits: boolean
  /** Every row the effect may write, so a rejection can put them back as they were. */
  touches: (db: DeviceDb, args: ParsedArgs<N>) => Promise<RowRef[]>
  // Pull replays pending entries over fresh server rows: an effect must be idempotent and depend only on
  // its args and the rows it finds.
  apply: (db: DeviceDb, args: ParsedArgs<N>, ctx: EffectContext) => Promise<void>
}

const spliceRef = (id: string): RowRef => ({ table: 'splices', id })
const closureRef = (id: string): RowRef => ({ table: 'closures', id })

async function putSplice(db: DeviceDb, args: ParsedArgs<'createSplice'>, ctx: EffectContext): Promise<void> {
  const existing = await db.splices.get(args.id)
  // Server-owned fields (flags, review, tombstone, a later attempt's supersession) survive a replay.
  const row: SpliceRow = {
    isCurrent: true,
    flags: [],
    reviewState: null,
    createdAt: ctx.clientTime,
    serverSeq: 0,
    deleted: false,
    ...existing,
    ...args,
  }
  await db.splices.put(row)
  if (args.supersedesId !== null) await db.splices.update(args.supersedesId, { isCurrent: false })
}

const createSplice: MutationSpec<'createSplice'> = {
  tables: ['splices'],
  requires: (args) => (args.supersedesId === null ? [] : [spliceRef(args.supersedesId)]),
  edits: false,
  touches: async (_db, args) => [
    spliceRef(args.id),
    ...(args.supersedesId === null ? [] : [spliceRef(args.supersedesId)]),
  ],
  apply: putSplice,
}

/** The local effect of every mutation, by name: used when it is recorded and when pull replays it. */
export const mutationSpecs: { [N in MutationName]: MutationSpec<N> } = {
  createSplice,
  resplice: {
    ...createSplice,
    validate: (args) =>
      args.supersedesId === null ? 'A re-splice names the attempt it replaces (supersedesId).' : null,
  },
  updateSplice: {
    tables: ['splices'],
    requires: (args) => [spliceRef(args.id)],
    edits: true,
    touches: async (_db, args) => [spliceRef(args.id)],
    apply: async (db, args) => {
      await db.splices.update(args.id, args.fields)
    },
  },
  deleteSplice: {
    tables: ['splices'],
    requires: (args) => [spliceRef(args.id)],
    edits: true,
    touches: async (db, args) => {
      const row = await db.splices.get(args.id)
      return [spliceRef(args.id), ...(row?.supersedesId ? [spliceRef(row.supersedesId)] : [])]
    },
    apply: async (db, args) => {
      const row = await db.splices.get(args.id)
      if (!row) return
      await db.splices.put({ ...row, deleted: true })
      // Removing a mistaken re-splice makes the attempt it replaced the current one again.
      if (row.isCurrent && row.supersedesId !== null) {
        await db.splices.update(row.supersedesId, { isCurrent: true })
      }
    },
  },
  addPhotoLink: {
    tables: ['photoLinks'],
    requires: () => [],
    edits: false,
    touches: async (_db, args) => [{ table: 'photoLinks', id: args.id }],
    apply: async (db, args, ctx) => {
      const existing = await db.photoLinks.get(args.id)
      const defaults = { addedBy: db.userId, createdAt: ctx.clientTime, serverSeq: 0, deleted: false }
      await db.photoLinks.put({ ...defaults, ...existing, ...args })
    },
  },
  removePhotoLink: {
    tables: ['photoLinks'],
    requires: (args) => [{ table: 'photoLinks', id: args.id }],
    edits: true,
    touches: async (_db, args) => [{ table: 'photoLinks', id: args.id }],
    apply: async (db, args) => {
      await db.photoLinks.update(args.id, { deleted: true })
    },
  },
  addNote: {
    tables: ['notes'],
    requires: () => [],
    edits: false,
    touches: async (_db, args) => [{ table: 'notes', id: args.id }],
    apply: async (db, args, ctx) => {
      const existing = await db.notes.get(args.id)
      const defaults = { authorId: db.userId, createdAt: ctx.clientTime, serverSeq: 0, deleted: false }
      await db.notes.put({ ...defaults, ...existing, ...args })
    },
  },
  setClosurePosition: {
    tables: ['closures'],
    requires: (args) => [closureRef(args.closureId)],
    edits: true,
    touches: async (_db, args) => [closureRef(args.closureId)],
    apply: async (db, { closureId, lat, lon, routePositionM }) => {
      await db.closures.update(closureId, {
        lat,
        lon,
        ...(routePositionM === undefined ? {} : { routePositionM }),
      })
    },
  },
  signOffClosure: {
    tables: ['closures'],
    requires: (args) => [closureRef(args.closureId)],
    edits: true,
    touches: async (_db, args) => [closureRef(args.closureId)],
    apply: async (db, args, ctx) => {
      await db.closures.update(args.closureId, {
        state: 'signed_off',
        signedOffBy: db.userId,
        signedOffAt: ctx.clientTime,
      })
    },
  },
  reopenClosure: {
    tables: ['closures'],
    requires: (args) => [closureRef(args.closureId)],
    edits: true,
    touches: async (_db, args) => [closureRef(args.closureId)],
    apply: async (db, args) => {
      await db.closures.update(args.closureId, { state: 'reopened' })
    },
  },
  reviewSplice: {
    tables: ['splices'],
    requires: (args) => [spliceRef(args.id)],
    edits: true,
    touches: async (_db, args) => [spliceRef(args.id)],
    apply: async (db, args, ctx) => {
      await db.splices.update(args.id, {
        reviewState: args.verdict,
        reviewReason: args.reason,
        reviewedBy: db.userId,
        reviewedAt: ctx.clientTime,
      })
    },
  },
}

/** The spec of a mutation looked up by a runtime name (outbox entries carry their name as data). */
export function specOf(name: MutationName): MutationSpec<MutationName> {
  // The mapped type pairs each name with its args; a runtime name loses that pairing, so widen once here.
  return mutationSpecs[name] as unknown as MutationSpec<MutationName>
}

/** The rows behind `refs` as they are now, for an entry's before-snapshot. */
export async function snapshotRows(db: DeviceDb, refs: readonly RowRef[]): Promise<RowSnapshot[]> {
  const snapshots: RowSnapshot[] = []
  for (const ref of refs) {
    const row = (await db.table(ref.table).get(ref.id)) as Record<string, unknown> | undefined
    snapshots.push({ table: ref.table, id: ref.id, row: row ?? null })
  }
  return snapshots
}

/** Puts rows back as a snapshot recorded them (removing ones that were absent); call inside a transaction. */
export async function restoreRows(db: DeviceDb, snapshots: readonly RowSnapshot[]): Promise<void> {
  for (const snapshot of snapshots) {
    if (snapshot.row === null) await db.table(snapshot.table).delete(snapshot.id)
    else await db.table(snapshot.table).put(snapshot.row)
  }
}

/**
 * Re-applies outbox entries in seq order over whatever rows are stored, refreshing each entry's
 * before-snapshot; call inside a transaction over every synced table and the outbox.
 */
export async function replayOutbox(db: DeviceDb, entries: readonly OutboxEntry[]): Promise<void> {
  const ordered = [...entries].sort((a, b) => a.seq - b.seq)
  for (const entry of ordered) {
    const spec = specOf(entry.name)
    const args = entry.args as ParsedArgs<MutationName>
    const before = await snapshotRows(db, await spec.touches(db, args))
    await spec.apply(db, args, { seq: entry.seq, clientTime: entry.clientTime })
    if (JSON.stringify(before) !== JSON.stringify(entry.before)) await db.outbox.update(entry.seq, { before })
  }
}

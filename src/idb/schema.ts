import type { Dexie } from 'dexie'
import type { Cable } from '#shared/schemas/cable'
import type { Closure } from '#shared/schemas/closure'
import type { PlanRow } from '#shared/schemas/planRow'
import type { Project } from '#shared/schemas/project'
import type { Splice } from '#shared/schemas/splice'
import type { MutationName, Overwritten, SyncedTable } from '#shared/schemas/sync'
import type { Tray } from '#shared/schemas/tray'

/** Every mirrored row carries the server change that last wrote it (0: made here, not yet pulled). */
export interface SyncedFields {
  serverSeq: number
  deleted: boolean
}

export type ProjectRow = Project & SyncedFields
export type CableRow = Cable & SyncedFields
export type ClosureRow = Closure & SyncedFields & { signedOffBy: string | null; signedOffAt: string | null }
export type TrayRow = Tray & SyncedFields
export type PlanRowRecord = PlanRow & SyncedFields

export interface ClosureAssignmentRow extends SyncedFields {
  /** `${closureId}:${userId}`: the server's composite key as one IndexedDB key. */
  id: string
  closureId: string
  userId: string
  position: number
  assignedBy: string
  assignedAt: string
}

export type SpliceRow = Splice &
  SyncedFields & {
    isCurrent: boolean
    flags: string[]
    reviewState: 'accepted' | 'sent_back' | null
    /** The foreman's reason for the verdict (absent on rows pulled before reviews carried one). */
    reviewReason?: string | null
    reviewedBy?: string | null
    reviewedAt?: string | null
    createdAt: string
  }

export interface PhotoLinkRow extends SyncedFields {
  id: string
  sha256: string
  entity: 'splice' | 'tray' | 'closure'
  entityId: string
  addedBy: string
  createdAt: string
}

export interface NoteRow extends SyncedFields {
  id: string
  entity: 'closure' | 'splice'
  entityId: string
  authorId: string
  body: string
  createdAt: string
}

/** The row type of each mirrored table. */
export interface SyncedRows {
  projects: ProjectRow
  cables: CableRow
  closures: ClosureRow
  closureAssignments: ClosureAssignmentRow
  trays: TrayRow
  planRows: PlanRowRecord
  splices: SpliceRow
  photoLinks: PhotoLinkRow
  notes: NoteRow
}

/** A row as it was just before an outbox entry's local effect touched it (null: it did not exist). */
export interface RowSnapshot {
  table: SyncedTable
  id: string
  row: Record<string, unknown> | null
}

export interface OutboxEntry {
  seq: number
  name: MutationName
  /** The parsed args (schema defaults filled in), exactly as pushed. */
  args: Record<string, unknown>
  baseServerSeq: number
  clientTime: string
  /** 'sent': it may have reached the server, outcome unknown; both states are resent with the same seq. */
  state: 'pending' | 'sent'
  attempts: number
  lastError: string | null
  // Lets a rejection undo the local effect instead of leaving a value the server never took on screen.
  before: RowSnapshot[]
}

/** A mutation the server refused for good: kept, shown and exportable, never silently dropped. */
export interface RejectedEntry {
  seq: number
  name: MutationName
  args: Record<string, unknown>
  baseServerSeq: number
  clientTime: string
  code: string
  message: string
  at: string
}

/** A mutation the server merged while keeping other values: "your value X was replaced by Y (by Z)". */
export interface OverwrittenEntry {
  seq: number
  name: MutationName
  args: Record<string, unknown>
  overwritten: Overwritten[]
  at: string
}

/** Photo bytes as an ArrayBuffer: WebKit can fail to store Blobs, and test DOMs turn them into `{}`. */
export interface PhotoRow {
  sha256: string
  bytes: ArrayBuffer
  type: string
  size: number
  name: string
  width?: number
  height?: number
  /** 0 | 1, not boolean: IndexedDB cannot index booleans. */
  uploaded: 0 | 1
  createdAt: string
  attempts: number
  lastError: string | null
}

export interface DeviceMeta {
  key: 'device'
  clientId: string
  /** The seq the next local mutation gets; allocated in the mutation's own transaction, so never a gap. */
  nextSeq: number
  /** The server change sequence this device has pulled up to; never moves backwards. */
  cursor: number
  /** Server clock minus device clock, measured from the Date header; null until measured. */
  clockOffsetMs: number | null
  lastPushAt: string | null
  lastPullAt: string | null
  lastError: string | null
}

export const localTables = ['outbox', 'rejected', 'overwritten', 'photos', 'meta'] as const
export type LocalTable = (typeof localTables)[number]

// Version 1 as shipped. Never edit it: declare version 2 below it (only the tables that change) with an
// .upgrade() that migrates outbox entries, and keep a test that opens a version-1 database with it.
const version1: Record<SyncedTable | LocalTable, string> = {
  projects: 'id',
  cables: 'id, projectId',
  closures: 'id, projectId',
  closureAssignments: 'id, closureId, userId',
  trays: 'id, closureId',
  planRows: 'id, closureId, [trayId+slot]',
  splices: 'id, closureId, [closureId+trayId], [trayId+slot], supersedesId',
  photoLinks: 'id, [entity+entityId], sha256',
  notes: 'id, [entity+entityId]',
  outbox: 'seq, state',
  rejected: 'seq',
  overwritten: 'seq',
  photos: 'sha256, uploaded',
  meta: 'key',
}

/** Declares every shipped schema version on a device database, oldest first. */
export function declareVersions(db: Dexie): void {
  db.version(1).stores(version1)
}

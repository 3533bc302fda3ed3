import { mutationArgsSchemas, type MutationArgs, type MutationName } from '#shared/schemas/sync'
import { hashBytes } from '@/sync/hash'
import { deviceMeta, type DeviceDb } from './db'
import { type EffectContext, type ParsedArgs, snapshotRows, specOf } from './mutations'
import type { LocalTable, OutboxEntry, PhotoRow } from './schema'

/** A local edit refused before anything was written: its args break the shared schema or a rule of it. */
export class MutationArgsError extends Error {
  override name = 'MutationArgsError'
  constructor(
    readonly mutation: MutationName,
    readonly issues: readonly { path: string; message: string }[],
  ) {
    const detail = issues.map((issue) => (issue.path ? `${issue.path}: ${issue.message}` : issue.message))
    super(`${mutation} was not recorded: ${detail.join('; ')}`)
  }
}

/** A local edit refused because the record it changes is not on this device. */
export class MissingRecordError extends Error {
  override name = 'MissingRecordError'
  constructor(
    readonly mutation: MutationName,
    readonly table: string,
    readonly id: string,
  ) {
    super(`${mutation} was not recorded: ${table} ${id} is not on this device.`)
  }
}

export interface WriteOptions {
  /** Device clock, for clientTime. */
  now?: () => number
}

export interface RecordOptions<N extends MutationName> extends WriteOptions {
  // The registered effect (mutations.ts) always runs first; `apply` is for writes pull must not replay.
  /** Extra local writes in the same transaction, after the mutation's own effect (e.g. photo bytes). */
  apply?: (args: ParsedArgs<N>, ctx: EffectContext) => Promise<void>
  /** Local tables `apply` writes besides the mutation's record tables. */
  tables?: readonly LocalTable[]
}

/** Parses args with the mutation's shared schema and rules, throwing MutationArgsError when they fail. */
export function parseMutationArgs<N extends MutationName>(name: N, args: unknown): ParsedArgs<N> {
  const schema = mutationArgsSchemas[name]
  if (!schema) throw new MutationArgsError(name, [{ path: '', message: `unknown mutation ${String(name)}` }])
  const result = schema.safeParse(args)
  if (!result.success) {
    const issues = result.error.issues.map((issue) => ({
      path: issue.path.join('.'),
      message: issue.message,
    }))
    throw new MutationArgsError(name, issues)
  }
  const parsed = result.data as ParsedArgs<N>
  const problem = specOf(name).validate?.(parsed as ParsedArgs<MutationName>)
  if (problem) throw new MutationArgsError(name, [{ path: '', message: problem }])
  return parsed
}

/**
 * Records a local edit: validates `args`, then writes the local effect, its outbox entry and the next
 * seq in one transaction.
 */
export async function recordMutation<N extends MutationName>(
  db: DeviceDb,
  name: N,
  args: MutationArgs<N>,
  options: RecordOptions<N> = {},
): Promise<OutboxEntry> {
  const parsed = parseMutationArgs(name, args)
  const spec = specOf(name)
  const clientTime = new Date((options.now ?? Date.now)()).toISOString()
  const tables = [...spec.tables, 'outbox', 'meta', ...(options.tables ?? [])]
  // Guarantee: local write, outbox entry and meta.nextSeq commit together or not at all: seqs have no gaps.
  return db.transaction('rw', tables, async () => {
    const meta = await deviceMeta(db)
    let baseServerSeq = meta.cursor
    const required = spec.requires(parsed as ParsedArgs<MutationName>)
    for (const [i, ref] of required.entries()) {
      const row = (await db.table(ref.table).get(ref.id)) as
        { serverSeq: number; deleted: boolean } | undefined
      if (!row || row.deleted) throw new MissingRecordError(name, ref.table, ref.id)
      // A record made here and not yet pulled has serverSeq 0; the device then edited from its cursor.
      if (i === 0 && spec.edits && row.serverSeq > 0) baseServerSeq = row.serverSeq
    }
    const seq = meta.nextSeq
    const ctx: EffectContext = { seq, clientTime }
    const before = await snapshotRows(db, await spec.touches(db, parsed as ParsedArgs<MutationName>))
    await spec.apply(db, parsed as ParsedArgs<MutationName>, ctx)
    await options.apply?.(parsed, ctx)
    const entry: OutboxEntry = {
      seq,
      name,
      args: parsed as Record<string, unknown>,
      baseServerSeq,
      clientTime,
      state: 'pending',
      attempts: 0,
      lastError: null,
      before,
    }
    await db.outbox.add(entry)
    await db.meta.update('device', { nextSeq: seq + 1 })
    return entry
  })
}

/** Logs a first splice of a fiber pair. */
export function logSplice(db: DeviceDb, args: MutationArgs<'createSplice'>, options?: WriteOptions) {
  return recordMutation(db, 'createSplice', args, options)
}

/** Logs a later attempt at a fiber pair; the attempt it supersedes stops being current on this device. */
export function resplice(db: DeviceDb, args: MutationArgs<'resplice'>, options?: WriteOptions) {
  return recordMutation(db, 'resplice', args, options)
}

/** Changes fields of a splice. */
export function editSplice(
  db: DeviceDb,
  id: string,
  fields: MutationArgs<'updateSplice'>['fields'],
  options?: WriteOptions,
) {
  return recordMutation(db, 'updateSplice', { id, fields }, options)
}

/** Removes a splice logged by mistake (a tombstone here until the server answers). */
export function deleteSplice(db: DeviceDb, id: string, options?: WriteOptions) {
  return recordMutation(db, 'deleteSplice', { id }, options)
}

/** A photo as the camera step hands it over: bytes already re-encoded, never a Blob. */
export interface NewPhoto {
  bytes: ArrayBuffer
  type: string
  name: string
  width?: number
  height?: number
}

/**
 * Attaches a photo to a splice, tray or closure: stores its bytes (keyed by sha256) and the link in one
 * transaction; returns the entry and the hash.
 */
export async function addPhotoLink(
  db: DeviceDb,
  link: Omit<MutationArgs<'addPhotoLink'>, 'sha256'>,
  photo: NewPhoto,
  options: WriteOptions = {},
): Promise<{ entry: OutboxEntry; sha256: string }> {
  if (!(photo.bytes instanceof ArrayBuffer)) {
    throw new MutationArgsError('addPhotoLink', [
      { path: 'bytes', message: 'Photo bytes must be an ArrayBuffer.' },
    ])
  }
  if (!/^image\/[a-z0-9.+-]+$/.test(photo.type)) {
    throw new MutationArgsError('addPhotoLink', [
      { path: 'type', message: `Not an image type: ${photo.type}` },
    ])
  }
  // Hashed before the transaction: awaiting crypto inside it would let IndexedDB commit it early.
  const sha256 = await hashBytes(photo.bytes)
  const entry = await recordMutation(
    db,
    'addPhotoLink',
    { ...link, sha256 },
    {
      ...options,
      tables: ['photos'],
      apply: async (_args, ctx) => {
        if (await db.photos.get(sha256)) return
        const row: PhotoRow = {
          sha256,
          bytes: photo.bytes,
          type: photo.type,
          size: photo.bytes.byteLength,
          name: photo.name,
          ...(photo.width === undefined ? {} : { width: photo.width }),
          ...(photo.height === undefined ? {} : { height: photo.height }),
          uploaded: 0,
          createdAt: ctx.clientTime,
          attempts: 0,
          lastError: null,
        }
        await db.photos.add(row)
      },
    },
  )
  return { entry, sha256 }
}

/** Removes a photo link (a tombstone; the photo bytes stay). */
export function removePhotoLink(db: DeviceDb, id: string, options?: WriteOptions) {
  return recordMutation(db, 'removePhotoLink', { id }, options)
}

/** Adds a note to a closure or a splice. */
export function addNote(db: DeviceDb, args: MutationArgs<'addNote'>, options?: WriteOptions) {
  return recordMutation(db, 'addNote', args, options)
}

/** Records where a closure is (GPS, and optionally its position along the route). */
export function setClosurePosition(
  db: DeviceDb,
  args: MutationArgs<'setClosurePosition'>,
  options?: WriteOptions,
) {
  return recordMutation(db, 'setClosurePosition', args, options)
}

/** Signs a closure off. */
export function signOffClosure(db: DeviceDb, args: MutationArgs<'signOffClosure'>, options?: WriteOptions) {
  return recordMutation(db, 'signOffClosure', args, options)
}

/** Records the foreman's verdict on a splice (accepted, or sent back to the splicer), with the reason. */
export function reviewSplice(db: DeviceDb, args: MutationArgs<'reviewSplice'>, options?: WriteOptions) {
  return recordMutation(db, 'reviewSplice', args, options)
}

/** Reopens a signed-off closure, with the reason. */
export function reopenClosure(db: DeviceDb, args: MutationArgs<'reopenClosure'>, options?: WriteOptions) {
  return recordMutation(db, 'reopenClosure', args, options)
}

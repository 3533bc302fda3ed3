import { createHash, randomUUID } from 'node:crypto'
import { rm, writeFile } from 'node:fs/promises'
import { join } from 'node:path'
import type { Readable } from 'node:stream'
import { z } from 'zod'
import type { AppContext } from '../context'
import type { Actor } from '../middleware/auth'
import { closeOutData, closeOutFile, closeOutFilename, renderCloseOut, systemActor } from './closeOut'
import { getClosure } from './closures'

// The close-out PDF of each sign-off, rendered once after the push that signed the closure off, kept in the
// report store under its sha256 and recorded in close_out_reports; the sign-off message and the download
// both hand out that copy. A closure that is not signed off gets a live copy, rendered on each request.

/** One stored close-out report: the copy of one sign-off (closure + signed_off_at). */
export interface StoredCloseOut {
  id: number
  closureId: string
  signedOffAt: string
  sha256: string
  storageKey: string
  size: number
  createdAt: string
}

export const closeOutQuerySchema = z
  .object({
    /** `1`: render the report now from the rows as they are, instead of handing out the stored copy. */
    fresh: z.literal('1', { error: 'must be 1 or left out' }).optional(),
  })
  .strict()

const recordColumns = `id, closure_id AS closureId, signed_off_at AS signedOffAt, sha256, storage_key AS storageKey,
  size, created_at AS createdAt`

function recordOf(ctx: AppContext, closureId: string, signedOffAt: string): StoredCloseOut | undefined {
  return ctx.database.sqlite
    .prepare(`SELECT ${recordColumns} FROM close_out_reports WHERE closure_id = ? AND signed_off_at = ?`)
    .get(closureId, signedOffAt) as StoredCloseOut | undefined
}

/** The moment of the closure's current sign-off, or null when it is not signed off. */
function currentSignOff(ctx: AppContext, closureId: string): string | null {
  const row = ctx.database.sqlite
    .prepare("SELECT signed_off_at AS at FROM closures WHERE id = ? AND deleted = 0 AND state = 'signed_off'")
    .get(closureId) as { at: string | null } | undefined
  return row?.at ?? null
}

// One archiving job per sign-off at a time (the push's and a download's): the second waits for the first
// instead of rendering a second copy with other bytes.
const running = new WeakMap<AppContext, Map<string, Promise<StoredCloseOut | null>>>()

/**
 * The stored close-out report of the closure's current sign-off: the recorded copy while its bytes are in
 * the store, otherwise rendered now, stored under its sha256 and recorded (a record whose bytes were lost
 * points at the new copy). Null when the closure is not signed off, or was reopened while it rendered.
 * Rejects when the store or the database fails; nothing is recorded then.
 */
export function archiveCloseOut(ctx: AppContext, closureId: string): Promise<StoredCloseOut | null> {
  const signedOffAt = currentSignOff(ctx, closureId)
  if (signedOffAt === null) return Promise.resolve(null)
  const jobs = running.get(ctx) ?? new Map<string, Promise<StoredCloseOut | null>>()
  running.set(ctx, jobs)
  const key = `${closureId} ${signedOffAt}`
  const started = jobs.get(key)
  if (started) return started
  const job = storeCloseOut(ctx, closureId, signedOffAt).finally(() => jobs.delete(key))
  jobs.set(key, job)
  return job
}

async function storeCloseOut(
  ctx: AppContext,
  closureId: string,
  signedOffAt: string,
): Promise<StoredCloseOut | null> {
  const store = ctx.storage.reports
  const known = recordOf(ctx, closureId, signedOffAt)
  if (known && (await store.has(known.storageKey))) return known
  const data = await closeOutData(ctx, systemActor(ctx), closureId)
  // The report shows the closure as it was read; a reopen in between makes it no record of this sign-off.
  if (data.closure.state !== 'signed_off' || data.closure.signedOffAt !== signedOffAt) return null
  const bytes = await renderCloseOut(data)
  const sha256 = createHash('sha256').update(bytes).digest('hex')
  const temp = join(store.tempDir, `${randomUUID()}.part`)
  let storageKey: string
  try {
    await writeFile(temp, bytes, { mode: 0o600 })
    storageKey = await store.put(sha256, temp)
  } finally {
    await rm(temp, { force: true })
  }
  ctx.database.sqlite
    .prepare(
      `INSERT INTO close_out_reports (closure_id, signed_off_at, sha256, storage_key, size, created_at)
       VALUES (?, ?, ?, ?, ?, ?)
       ON CONFLICT (closure_id, signed_off_at) DO UPDATE SET sha256 = excluded.sha256,
         storage_key = excluded.storage_key, size = excluded.size, created_at = excluded.created_at`,
    )
    .run(closureId, signedOffAt, sha256, storageKey, bytes.length, new Date().toISOString())
  return recordOf(ctx, closureId, signedOffAt)!
}

/** The stored copy's bytes, whole and checked against its sha256 (what the sign-off message attaches). */
export async function storedCloseOutBytes(ctx: AppContext, record: StoredCloseOut): Promise<Buffer> {
  const parts: Buffer[] = []
  for await (const part of await ctx.storage.reports.read(record.storageKey))
    parts.push(Buffer.from(part as Uint8Array))
  const bytes = Buffer.concat(parts)
  if (createHash('sha256').update(bytes).digest('hex') !== record.sha256)
    throw new Error(`stored close-out ${record.storageKey} does not hash to its record`)
  return bytes
}

/**
 * Stores the close-out report of every current sign-off that has none yet (a store that failed at sign-off
 * time, or sign-offs from before reports were stored); run by the daily job. One failure does not stop the
 * rest; a record whose bytes went missing is mended when it is next asked for.
 */
export async function archiveMissingCloseOuts(ctx: AppContext) {
  const missing = ctx.database.sqlite
    .prepare(
      `SELECT c.id FROM closures c
        WHERE c.deleted = 0 AND c.state = 'signed_off' AND c.signed_off_at IS NOT NULL
          AND NOT EXISTS (SELECT 1 FROM close_out_reports r
                           WHERE r.closure_id = c.id AND r.signed_off_at = c.signed_off_at)
        ORDER BY c.signed_off_at`,
    )
    .pluck()
    .all() as string[]
  let stored = 0
  let failed = 0
  for (const closureId of missing) {
    try {
      if (await archiveCloseOut(ctx, closureId)) stored += 1
    } catch (error) {
      failed += 1
      ctx.logger.error({ err: error, closureId }, 'close-out report not stored')
    }
  }
  return { stored, failed }
}

/** What GET /api/closures/:closureId/close-out sends: the stored copy as a stream, or a live copy. */
export type CloseOutDownload =
  | { filename: string; stored: StoredCloseOut; body: Readable }
  | { filename: string; stored: null; body: Buffer }

/**
 * The close-out report for a download: for a signed-off closure the stored copy of its current sign-off
 * (stored now when it is missing), for any other closure, or with `?fresh=1`, a copy rendered now and not
 * stored. Scope as for the closure itself. When the store fails, a rendered copy is sent all the same.
 */
export async function closeOutDownload(
  ctx: AppContext,
  actor: Actor,
  closureId: unknown,
  query: unknown,
): Promise<CloseOutDownload> {
  const closure = getClosure(ctx, actor, closureId)
  const { fresh } = closeOutQuerySchema.parse(query)
  const live = async (): Promise<CloseOutDownload> => {
    const file = await closeOutFile(ctx, actor, closure.id)
    return { filename: file.filename, stored: null, body: file.body }
  }
  if (fresh || closure.state !== 'signed_off') return live()
  try {
    const stored = await archiveCloseOut(ctx, closure.id)
    if (!stored) return live()
    return {
      filename: closeOutFilename(closure.label),
      stored,
      body: await ctx.storage.reports.read(stored.storageKey),
    }
  } catch (error) {
    ctx.logger.error({ err: error, closureId: closure.id }, 'stored close-out report not available')
    return live()
  }
}

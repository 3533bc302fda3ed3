import { and, eq, ne } from 'drizzle-orm'
import type { Conn } from '#db/client'
import { photoLinks, splices } from '#db/schema/index'
import type { ProjectLimits } from '#shared/schemas/project'
import { dbOf } from './records'
import { recomputeClosureTotals } from './splices'

// Writes to existing splices and photo links. insertSplice keeps closure_totals by deltas; these changes
// (an edited loss or pair, a tombstone, a removed photo) can move several totals at once, so they rebuild
// the closure's row from its splices in the same transaction instead.

type SpliceRow = typeof splices.$inferSelect
type SplicePatch = Partial<Omit<typeof splices.$inferInsert, 'id' | 'closureId' | 'serverSeq'>>

/** Changes fields of a splice and rebuilds its closure's totals. */
export function updateSpliceFields(
  conn: Conn,
  splice: Pick<SpliceRow, 'id' | 'closureId'>,
  patch: SplicePatch,
  options: { serverSeq: number; limits: ProjectLimits },
): SpliceRow {
  const row = dbOf(conn)
    .update(splices)
    .set({ ...patch, serverSeq: options.serverSeq })
    .where(eq(splices.id, splice.id))
    .returning()
    .get()
  recomputeClosureTotals(conn, splice.closureId, options.limits)
  return row
}

/**
 * Tombstones a splice; when it was the current attempt of a re-splice, the attempt it replaced becomes current
 * again (unless another live attempt replaces that one too), as on the device.
 */
export function tombstoneSplice(
  conn: Conn,
  splice: Pick<SpliceRow, 'id' | 'closureId' | 'isCurrent' | 'supersedesId'>,
  options: { serverSeq: number; limits: ProjectLimits },
): void {
  const db = dbOf(conn)
  db.update(splices)
    .set({ deleted: true, serverSeq: options.serverSeq })
    .where(eq(splices.id, splice.id))
    .run()
  if (splice.isCurrent && splice.supersedesId !== null) {
    const rival = db
      .select({ id: splices.id })
      .from(splices)
      .where(
        and(
          eq(splices.supersedesId, splice.supersedesId),
          eq(splices.deleted, false),
          ne(splices.id, splice.id),
        ),
      )
      .get()
    if (!rival) {
      db.update(splices)
        .set({ isCurrent: true, serverSeq: options.serverSeq })
        .where(and(eq(splices.id, splice.supersedesId), eq(splices.deleted, false)))
        .run()
    }
  }
  recomputeClosureTotals(conn, splice.closureId, options.limits)
}

/** Tombstones a photo link; a splice photo can change its closure's photo count, so the totals are rebuilt. */
export function tombstonePhotoLink(
  conn: Conn,
  link: Pick<typeof photoLinks.$inferSelect, 'id' | 'entity'>,
  closureId: string,
  options: { serverSeq: number; limits: ProjectLimits },
): void {
  dbOf(conn)
    .update(photoLinks)
    .set({ deleted: true, serverSeq: options.serverSeq })
    .where(eq(photoLinks.id, link.id))
    .run()
  if (link.entity === 'splice') recomputeClosureTotals(conn, closureId, options.limits)
}

import { eq, sql } from 'drizzle-orm'
import type { Conn } from '#db/client'
import { photoLinks, photos } from '#db/schema/index'
import type { ClosureState } from '#shared/schemas/enums'
import { dbOf } from './records'

export type PhotoRow = typeof photos.$inferSelect

/** The stored photo with this hash, if any. */
export function findPhoto(conn: Conn, sha256: string): PhotoRow | undefined {
  return dbOf(conn).select().from(photos).where(eq(photos.sha256, sha256)).get()
}

/** Records a stored photo; false when the hash was already recorded (a concurrent or repeated upload). */
export function insertPhoto(conn: Conn, row: PhotoRow): boolean {
  return dbOf(conn).insert(photos).values(row).onConflictDoNothing().run().changes === 1
}

/** The closures (crew and state) of every live record a live link attaches the photo to. */
export function closuresShowingPhoto(
  conn: Conn,
  sha256: string,
): { crewId: string | null; state: ClosureState }[] {
  return dbOf(conn).all<{ crewId: string | null; state: ClosureState }>(sql`
    SELECT c.crew_id AS crewId, c.state AS state
    FROM photo_links l
    LEFT JOIN splices s ON l.entity = 'splice' AND s.id = l.entity_id AND s.deleted = 0
    LEFT JOIN trays t ON l.entity = 'tray' AND t.id = l.entity_id AND t.deleted = 0
    JOIN closures c ON c.id = CASE l.entity WHEN 'closure' THEN l.entity_id WHEN 'splice' THEN s.closure_id
      WHEN 'tray' THEN t.closure_id END
    WHERE l.sha256 = ${sha256} AND l.deleted = 0 AND c.deleted = 0`)
}

/** Stamps the photo's links with a new change sequence value, so pulls re-send them as no longer missing. */
export function restampPhotoLinks(conn: Conn, sha256: string, serverSeq: number): void {
  dbOf(conn).update(photoLinks).set({ serverSeq }).where(eq(photoLinks.sha256, sha256)).run()
}

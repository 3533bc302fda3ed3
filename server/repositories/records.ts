import { and, asc, count, eq, type SQL } from 'drizzle-orm'
import type { SQLiteColumn, SQLiteTable } from 'drizzle-orm/sqlite-core'
import type { Conn, Db } from '#db/client'
import { rawSqlite } from '#db/client'
import { drizzle } from 'drizzle-orm/better-sqlite3'
import * as schema from '#db/schema/index'

/** A synced record table: string id, change-sequence stamp and tombstone flag. */
type SyncedTable = SQLiteTable & { id: SQLiteColumn; serverSeq: SQLiteColumn; deleted: SQLiteColumn }

const handles = new WeakMap<object, Db>()

/** A Drizzle handle over the same connection (and so the same open transaction) as `conn`. */
export function dbOf(conn: Conn): Db {
  const sqlite = rawSqlite(conn)
  let db = handles.get(sqlite)
  if (!db) {
    db = drizzle(sqlite, { schema })
    handles.set(sqlite, db)
  }
  return db
}

/** Plain CRUD over one synced table; every write stamps the transaction's change sequence value. */
export function recordsOf<T extends SyncedTable>(table: T) {
  type Row = T['$inferSelect']
  type Insert = T['$inferInsert']
  const live = (id: string) => and(eq(table.id, id), eq(table.deleted, false))
  return {
    get(conn: Conn, id: string): Row | undefined {
      return dbOf(conn).select().from(table).where(live(id)).get() as Row | undefined
    },
    list(
      conn: Conn,
      where: SQL | undefined,
      page: { limit: number; offset: number },
      order: SQL | SQLiteColumn = asc(table.id),
    ) {
      const db = dbOf(conn)
      const filter = where ? and(where, eq(table.deleted, false)) : eq(table.deleted, false)
      const items = db
        .select()
        .from(table)
        .where(filter)
        .orderBy(order)
        .limit(page.limit)
        .offset(page.offset)
        .all() as Row[]
      const total = db.select({ n: count() }).from(table).where(filter).get()?.n ?? 0
      return { items, total, ...page }
    },
    all(conn: Conn, where: SQL | undefined, order: SQL | SQLiteColumn = asc(table.id)): Row[] {
      const filter = where ? and(where, eq(table.deleted, false)) : eq(table.deleted, false)
      return dbOf(conn).select().from(table).where(filter).orderBy(order).all() as Row[]
    },
    insert(conn: Conn, values: Insert, serverSeq: number): Row {
      return dbOf(conn)
        .insert(table)
        .values({ ...values, serverSeq } as Insert)
        .returning()
        .get() as Row
    },
    update(conn: Conn, id: string, patch: Partial<Insert>, serverSeq: number): Row {
      return dbOf(conn)
        .update(table)
        .set({ ...patch, serverSeq } as Partial<Insert>)
        .where(live(id))
        .returning()
        .get() as Row
    },
    remove(conn: Conn, id: string, serverSeq: number): void {
      dbOf(conn)
        .update(table)
        .set({ deleted: true, serverSeq } as Partial<Insert>)
        .where(live(id))
        .run()
    },
  }
}

import { integer } from 'drizzle-orm/sqlite-core'

/** The change sequence value of the transaction that last wrote the row; pull cursors compare against it. */
export const serverSeq = () => integer('server_seq').notNull().default(0)

/** Tombstone flag: synced rows are never removed, so a pull can tell devices what went away. */
export const deleted = () => integer('deleted', { mode: 'boolean' }).notNull().default(false)

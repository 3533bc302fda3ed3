import { createHash } from 'node:crypto'
import type { Database } from '#db/client'

// Proof that a refused request wrote nothing: a hash over every row of every table (the change sequence
// included). Hashing the whole file each time is slow, so `total_changes()` of the app's one connection
// (rows inserted, updated or deleted since it opened) says first whether anything could have changed.

export interface Fingerprint {
  /** SQLite's count of rows changed on the connection; equal means no statement changed a row. */
  changes: number
  /** sha256 over every table's rows in rowid order, with the table names. */
  hash: string
}

function tableNames(database: Database): string[] {
  return database.sqlite
    .prepare("SELECT name FROM sqlite_master WHERE type = 'table' AND name NOT LIKE 'sqlite_%' ORDER BY name")
    .pluck()
    .all() as string[]
}

/** Every row of every table, hashed. */
export function contentHash(database: Database): string {
  const hash = createHash('sha256')
  for (const name of tableNames(database)) {
    hash.update(`\u0000table ${name}\u0000`)
    for (const row of database.sqlite.prepare(`SELECT * FROM "${name}"`).raw().iterate())
      hash.update(JSON.stringify(row, (_k, v: unknown) => (Buffer.isBuffer(v) ? v.toString('hex') : v)))
  }
  return hash.digest('hex')
}

const totalChanges = (database: Database) =>
  database.sqlite.prepare('SELECT total_changes()').pluck().get() as number

export function fingerprint(database: Database): Fingerprint {
  return { changes: totalChanges(database), hash: contentHash(database) }
}

/** Whether the database still holds exactly what `before` saw (hashing only when some row was touched). */
export function unchangedSince(database: Database, before: Fingerprint): boolean {
  if (totalChanges(database) === before.changes) return true
  return contentHash(database) === before.hash
}

import { fileURLToPath } from 'node:url'
import { migrate } from 'drizzle-orm/better-sqlite3/migrator'
import type { Db } from './client'

const migrationsFolder = fileURLToPath(new URL('./migrations', import.meta.url))

/** Applies every migration in db/migrations not yet applied to this database, synchronously. */
export function runMigrations(db: Db): void {
  const sqlite = db.$client
  // SQLite's procedure for schema changes: a table rebuild (drizzle-kit's way to alter a column) would
  // otherwise cascade or fail on foreign keys. The pragma is a no-op inside a transaction, hence out here.
  sqlite.pragma('foreign_keys = OFF')
  try {
    migrate(db, { migrationsFolder })
    const broken = sqlite.pragma('foreign_key_check') as unknown[]
    if (broken.length > 0) throw new Error(`migrations left ${broken.length} rows with broken foreign keys`)
  } finally {
    sqlite.pragma('foreign_keys = ON')
  }
}

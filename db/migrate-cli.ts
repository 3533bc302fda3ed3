// `npm run db:migrate`: applies the migrations to the file named by LIGHTSEAM_DB (default data/lightseam.sqlite).
import { openDatabase } from './client'
import { runMigrations } from './migrate'

const file = process.env.LIGHTSEAM_DB ?? 'data/lightseam.sqlite'
const { sqlite, db } = openDatabase(file)
try {
  runMigrations(db)
  const { n } = sqlite.prepare('SELECT count(*) AS n FROM __drizzle_migrations').get() as { n: number }
  console.warn(`${file}: schema up to date (${n} migrations applied).`)
} finally {
  sqlite.close()
}

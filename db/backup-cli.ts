// `npm run db:backup [-- <file>]`: an online copy of the database named by LIGHTSEAM_DB (default
// data/lightseam.sqlite) while the server runs, into <file> or data/backups/lightseam-<UTC time>.sqlite.
// Restore: stop the server, put the copy in place of the database file (remove any -wal/-shm beside it),
// start the server.
import { backupDatabase, backupName } from './backup'

const source = process.env.LIGHTSEAM_DB ?? `${process.env.LIGHTSEAM_DATA_DIR ?? 'data'}/lightseam.sqlite`
const dest = process.argv[2] ?? backupName(`${process.env.LIGHTSEAM_DATA_DIR ?? 'data'}/backups`)
try {
  const result = await backupDatabase(source, dest)
  console.warn(
    `${source} → ${result.file}: ${result.pages} pages in ${result.ms.toFixed(0)} ms, integrity ok.`,
  )
} catch (error) {
  console.error(`Backup failed: ${(error as Error).message}`)
  process.exit(1)
}

import { mkdirSync } from 'node:fs'
import { dirname, resolve } from 'node:path'
import BetterSqlite3 from 'better-sqlite3'

export interface BackupResult {
  file: string
  pages: number
  ms: number
}

/**
 * Copies a live database with SQLite's online backup API from a connection of its own: the server keeps
 * writing meanwhile (WAL), and the copy is one consistent moment of it — every transaction in it whole, none
 * in part. The copy is checked (integrity_check) before it is reported done.
 */
export async function backupDatabase(sourceFile: string, destFile: string): Promise<BackupResult> {
  const started = performance.now()
  const dest = resolve(destFile)
  mkdirSync(dirname(dest), { recursive: true })
  const source = new BetterSqlite3(sourceFile, { fileMustExist: true })
  source.pragma('busy_timeout = 5000')
  try {
    // A write by another connection between two steps restarts the copy, and the server writes all day; so
    // after the first step the rest goes in one step, a read transaction that WAL lets the server write past.
    const progress = await source.backup(dest, { progress: () => 2 ** 30 })
    const copy = new BetterSqlite3(dest, { fileMustExist: true })
    try {
      const check = copy.pragma('integrity_check', { simple: true })
      if (check !== 'ok') throw new Error(`the backup ${dest} failed its integrity check: ${String(check)}`)
      // A copy is read on its own: fold its WAL into the file so one file is the whole backup.
      copy.pragma('journal_mode = DELETE')
    } finally {
      copy.close()
    }
    return { file: dest, pages: progress.totalPages, ms: performance.now() - started }
  } finally {
    source.close()
  }
}

/** `data/backups/lightseam-20261201-2315.sqlite`-style names, in UTC. */
export function backupName(dir: string, now = new Date()): string {
  const stamp = now.toISOString().replace(/[-:]/g, '').replace('T', '-').slice(0, 15)
  return resolve(dir, `lightseam-${stamp}.sqlite`)
}

import type BetterSqlite3 from 'better-sqlite3'
import { loadProjectLimits, recomputeProjectTotals } from '../../../server/repositories/splices'

// The sync promises of SYNC.md as checks on a database file at rest (a backup, a restored copy, a file a
// killed server left): whole pages, one answer per seq with no holes, an effect for every applied create,
// change stamps below the sequence, and maintained totals equal to a rebuild from rows.

/** Every broken promise, in words; empty when the file keeps them all. */
export function syncInvariantProblems(db: BetterSqlite3.Database): string[] {
  const problems: string[] = []
  const integrity = db.pragma('integrity_check', { simple: true })
  if (integrity !== 'ok') problems.push(`integrity_check: ${String(integrity)}`)
  const foreign = db.pragma('foreign_key_check') as unknown[]
  if (foreign.length > 0) problems.push(`foreign_key_check: ${foreign.length} rows`)

  const clients = db
    .prepare(
      `SELECT c.client_id AS clientId, c.last_seq AS lastSeq, count(a.seq) AS answers, coalesce(max(a.seq), 0) AS top
       FROM sync_clients c LEFT JOIN applied_mutations a ON a.client_id = c.client_id GROUP BY c.client_id`,
    )
    .all() as Array<{ clientId: string; lastSeq: number; answers: number; top: number }>
  for (const c of clients) {
    if (c.answers !== c.lastSeq || c.top !== c.lastSeq)
      problems.push(`client ${c.clientId}: last_seq ${c.lastSeq}, ${c.answers} answers up to ${c.top}`)
  }
  const creates = db
    .prepare(
      `SELECT a.client_id AS clientId, count(*) AS applied,
         (SELECT count(*) FROM splices s WHERE s.client_id = a.client_id) AS stored
       FROM applied_mutations a
       WHERE a.name IN ('createSplice', 'resplice') AND json_extract(a.result, '$.status') IN ('applied', 'merged')
       GROUP BY a.client_id`,
    )
    .all() as Array<{ clientId: string; applied: number; stored: number }>
  for (const c of creates) {
    if (c.applied !== c.stored)
      problems.push(`client ${c.clientId}: ${c.applied} applied creates but ${c.stored} splices`)
  }
  const seq = (db.prepare('SELECT value FROM change_seq WHERE id = 1').get() as { value: number }).value
  for (const table of ['splices', 'closures', 'notes', 'photo_links', 'plan_rows']) {
    const top = (
      db.prepare(`SELECT coalesce(max(server_seq), 0) AS top FROM ${table}`).get() as { top: number }
    ).top
    if (top > seq) problems.push(`${table}: server_seq ${top} beyond change_seq ${seq}`)
  }

  // Rebuilt inside a transaction that is rolled back: the file is only read.
  const snapshot = () => JSON.stringify(db.prepare('SELECT * FROM closure_totals ORDER BY closure_id').all())
  const kept = snapshot()
  db.exec('BEGIN')
  try {
    for (const { id } of db.prepare('SELECT id FROM projects').all() as Array<{ id: string }>) {
      const limits = loadProjectLimits(db, id)
      if (limits) recomputeProjectTotals(db, id, limits)
    }
    if (snapshot() !== kept) problems.push('closure_totals differ from a rebuild from rows')
  } finally {
    db.exec('ROLLBACK')
  }
  return problems
}

import type BetterSqlite3 from 'better-sqlite3'
import { type Conn, HeldRows, rawSqlite, type Sqlite } from '#db/client'

// sync_clients, applied_mutations and rejected_mutations: the server's memory of what each device sent.
// Prepared once per connection: every pushed mutation reads and writes here.

/** A device database and the user it is bound to. */
export interface SyncClient {
  clientId: string
  userId: string
  lastSeq: number
}

/** A quarantined mutation, as stored. */
export interface RejectedRow {
  id: number
  clientId: string
  seq: number
  userId: string
  userName: string | null
  name: string
  args: unknown
  code: string
  message: string
  at: string
  resolvedAt: string | null
}

type RawRejected = Omit<RejectedRow, 'args'> & { args: string }

interface Statements {
  client: BetterSqlite3.Statement<[string], SyncClient>
  bind: BetterSqlite3.Statement<[string, string, string, string]>
  advance: BetterSqlite3.Statement<[number, string, string]>
  result: BetterSqlite3.Statement<[string, number], { result: string }>
  quarantine: BetterSqlite3.Statement<[Record<string, unknown>]>
  rejected: BetterSqlite3.Statement<[number], RawRejected>
  rejectedList: BetterSqlite3.Statement<[{ open: number; max: number }], RawRejected>
  resolve: BetterSqlite3.Statement<[string, number]>
}

const rejectedColumns = `r.id, r.client_id AS clientId, r.seq, r.user_id AS userId, u.name AS userName, r.name,
  r.args, r.code, r.message, r.at, r.resolved_at AS resolvedAt
  FROM rejected_mutations r LEFT JOIN users u ON u.id = r.user_id`

const cache = new WeakMap<Sqlite, Statements>()

function statements(sqlite: Sqlite): Statements {
  let st = cache.get(sqlite)
  if (st) return st
  st = {
    client: sqlite.prepare(
      'SELECT client_id AS clientId, user_id AS userId, last_seq AS lastSeq FROM sync_clients WHERE client_id = ?',
    ),
    bind: sqlite.prepare(
      'INSERT INTO sync_clients (client_id, user_id, last_seq, created_at, last_seen_at) VALUES (?, ?, 0, ?, ?)',
    ),
    advance: sqlite.prepare('UPDATE sync_clients SET last_seq = ?, last_seen_at = ? WHERE client_id = ?'),
    result: sqlite.prepare('SELECT result FROM applied_mutations WHERE client_id = ? AND seq = ?'),
    quarantine: sqlite.prepare(
      `INSERT INTO rejected_mutations (client_id, seq, user_id, name, args, code, message, at)
       VALUES (@clientId, @seq, @userId, @name, @args, @code, @message, @at)`,
    ),
    rejected: sqlite.prepare(`SELECT ${rejectedColumns} WHERE r.id = ?`),
    // Open ones (resolved_at IS NULL) when the flag is 1, resolved ones when 0, both when -1.
    rejectedList: sqlite.prepare(
      `SELECT ${rejectedColumns}
       WHERE (@open = -1 OR (r.resolved_at IS NULL) = @open) ORDER BY r.id DESC LIMIT @max`,
    ),
    resolve: sqlite.prepare('UPDATE rejected_mutations SET resolved_at = ? WHERE id = ?'),
  }
  cache.set(sqlite, st)
  return st
}

const parseRejected = (row: RawRejected): RejectedRow => ({ ...row, args: JSON.parse(row.args) as unknown })

/** The device's binding and progress, or undefined before its first push. */
export function findSyncClient(conn: Conn, clientId: string): SyncClient | undefined {
  return statements(rawSqlite(conn)).client.get(clientId)
}

/** Binds a new client id to the user pushing with it. */
export function bindSyncClient(conn: Conn, clientId: string, userId: string, at: string): SyncClient {
  statements(rawSqlite(conn)).bind.run(clientId, userId, at, at)
  return { clientId, userId, lastSeq: 0 }
}

/** Records the last seq the server has accounted for from the client. */
export function advanceSyncClient(conn: Conn, clientId: string, lastSeq: number, at: string): void {
  statements(rawSqlite(conn)).advance.run(lastSeq, at, clientId)
}

// A push batch holds its answers and writes them together at its end (holdAnswers).
const heldAnswers = new HeldRows('applied_mutations', ['client_id', 'seq', 'name', 'result', 'applied_at'])

/**
 * From now until the transaction ends, the connection's stored answers are held and written together by
 * writeHeldAnswers; for a run without savepoints only, as holdAuditRows. Reading an answer (storedResult,
 * syncReads' field stamps) writes the held ones first.
 */
export function holdAnswers(conn: Conn): void {
  heldAnswers.hold(conn)
}

/** Writes the held answers; call before the transaction commits. */
export function writeHeldAnswers(conn: Conn): void {
  heldAnswers.write(conn)
}

/** Stops holding answers, dropping any still held (their transaction is rolled back or done). */
export function dropHeldAnswers(conn: Conn): void {
  heldAnswers.drop(conn)
}

/** The answer stored for (clientId, seq), as it was first given. */
export function storedResult<T>(conn: Conn, clientId: string, seq: number): T | undefined {
  writeHeldAnswers(conn)
  const row = statements(rawSqlite(conn)).result.get(clientId, seq)
  return row ? (JSON.parse(row.result) as T) : undefined
}

/** Keeps the answer for (clientId, seq) so a resend gets it again and has no second effect. */
export function storeResult(
  conn: Conn,
  entry: { clientId: string; seq: number; name: string; result: unknown; at: string },
): void {
  const values = [entry.clientId, entry.seq, entry.name, JSON.stringify(entry.result), entry.at]
  heldAnswers.add(conn, values)
}

/** Stores a refused payload so it can be shown, exported and re-applied; returns its id. */
export function quarantineMutation(
  conn: Conn,
  entry: Omit<RejectedRow, 'id' | 'userName' | 'resolvedAt'>,
): number {
  const info = statements(rawSqlite(conn)).quarantine.run({ ...entry, args: JSON.stringify(entry.args) })
  return Number(info.lastInsertRowid)
}

/** One quarantined mutation by id. */
export function findRejected(conn: Conn, id: number): RejectedRow | undefined {
  const row = statements(rawSqlite(conn)).rejected.get(id)
  return row ? parseRejected(row) : undefined
}

/** Quarantined mutations, newest first; `open` picks unresolved (true), resolved (false) or both (null). */
export function listRejectedRows(conn: Conn, open: boolean | null, max: number): RejectedRow[] {
  const flag = open === null ? -1 : open ? 1 : 0
  return statements(rawSqlite(conn)).rejectedList.all({ open: flag, max }).map(parseRejected)
}

/** Marks a quarantined mutation as dealt with. */
export function resolveRejected(conn: Conn, id: number, at: string): void {
  statements(rawSqlite(conn)).resolve.run(at, id)
}

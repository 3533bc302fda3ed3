import { mkdirSync } from 'node:fs'
import { dirname, resolve } from 'node:path'
import BetterSqlite3 from 'better-sqlite3'
import { drizzle } from 'drizzle-orm/better-sqlite3'
import * as schema from './schema/index'

export type Sqlite = BetterSqlite3.Database

/** The Drizzle handle over Lightseam's schema; `db.$client` is the better-sqlite3 connection beneath it. */
export type Db = ReturnType<typeof drizzleOver>

/** A Drizzle transaction handle, as passed to the callback of `db.transaction`. */
export type DbTransaction = Parameters<Parameters<Db['transaction']>[0]>[0]

/** Anything the write and query functions accept: the Drizzle handle, a Drizzle transaction or the raw connection. */
export type Conn = Db | DbTransaction | Sqlite

/** The one connection the server holds, in both forms. */
export interface Database {
  sqlite: Sqlite
  db: Db
}

function drizzleOver(sqlite: Sqlite) {
  return drizzle(sqlite, { schema })
}

const drizzleHandles = new WeakMap<Sqlite, Db>()

/** Opens (creating if needed) the SQLite file with the pragmas the sync protocol relies on. */
export function openDatabase(file: string): Database {
  const inMemory = file === ':memory:' || file === ''
  if (!inMemory) mkdirSync(dirname(resolve(file)), { recursive: true })
  const sqlite = new BetterSqlite3(file)
  // WAL lets reads run beside the single writer; FULL makes an acknowledged push survive power loss.
  sqlite.pragma('journal_mode = WAL')
  sqlite.pragma('synchronous = FULL')
  sqlite.pragma('foreign_keys = ON')
  sqlite.pragma('busy_timeout = 5000')
  // 64 MiB of page cache instead of 2 MiB: writes scattered over a large file re-read every uncached page
  // (tests/bench/board.bench.ts, re-splices over 1,000 closures of 1M splices: 0.49 → 0.37 ms each).
  sqlite.pragma('cache_size = -65536')
  // Savepoints (every mutation of a push batch run again guarded, every write transaction nested in another)
  // keep a statement journal that SQLite spills to a temp file past a few pages; in memory it costs no file
  // I/O (tests/bench/push.bench.ts, when every mutation had one: −1 s of 3.7 s for 10,000 splices). A
  // statement journal holds one savepoint's pages at most, so the memory stays small.
  sqlite.pragma('temp_store = MEMORY')
  const db = drizzleOver(sqlite)
  drizzleHandles.set(sqlite, db)
  return { sqlite, db }
}

/** The better-sqlite3 connection under any handle; statements on it join whatever transaction is open. */
export function rawSqlite(conn: Conn): Sqlite {
  if (conn instanceof BetterSqlite3) return conn
  if ('$client' in conn) return conn.$client
  // Drizzle keeps the connection on the transaction's session; better-sqlite3 has one transaction per
  // connection, so a statement on it runs inside the caller's transaction.
  const client = (conn as unknown as { session?: { client?: unknown } }).session?.client
  if (client instanceof BetterSqlite3) return client
  throw new TypeError('rawSqlite: not a Lightseam database handle')
}

/** A Drizzle handle over the same connection as `conn`, and so inside the same open transaction. */
export function dbOf(conn: Conn): Db {
  const sqlite = rawSqlite(conn)
  let db = drizzleHandles.get(sqlite)
  if (!db) {
    db = drizzleOver(sqlite)
    drizzleHandles.set(sqlite, db)
  }
  return db
}

// The change sequence's three statements, prepared once per connection: every push batch reads and writes it.
interface SeqStatements {
  next: BetterSqlite3.Statement<[], { value: number }>
  current: BetterSqlite3.Statement<[], { value: number }>
  set: BetterSqlite3.Statement<[number]>
}
const seqStatementCache = new WeakMap<Sqlite, SeqStatements>()

function seqStatements(sqlite: Sqlite): SeqStatements {
  let st = seqStatementCache.get(sqlite)
  if (!st) {
    st = {
      next: sqlite.prepare('UPDATE change_seq SET value = value + 1 WHERE id = 1 RETURNING value'),
      current: sqlite.prepare('SELECT value FROM change_seq WHERE id = 1'),
      set: sqlite.prepare('UPDATE change_seq SET value = ? WHERE id = 1'),
    }
    seqStatementCache.set(sqlite, st)
  }
  return st
}

// A push batch run without savepoints counts its change sequence values here and writes the last one once
// (holdServerSeq), instead of one UPDATE … RETURNING for every mutation.
const heldSeqs = new WeakMap<Sqlite, { value: number }>()

/** Increments the change sequence and returns the new value; call once per write transaction, inside it. */
export function nextServerSeq(conn: Conn): number {
  const sqlite = rawSqlite(conn)
  // Outside a transaction the value would not be tied to the commit of the rows stamped with it.
  if (!sqlite.inTransaction) throw new Error('nextServerSeq must run inside a write transaction')
  const held = heldSeqs.get(sqlite)
  if (held) {
    held.value += 1
    return held.value
  }
  const row = seqStatements(sqlite).next.get()
  if (!row) throw new Error('change_seq has no row: run the migrations first')
  return row.value
}

/** The change sequence value of the last committed write (what a pull cursor reaches when up to date). */
export function currentServerSeq(conn: Conn): number {
  const sqlite = rawSqlite(conn)
  const held = heldSeqs.get(sqlite)
  if (held) return held.value
  return seqStatements(sqlite).current.get()?.value ?? 0
}

/**
 * From now until writeHeldServerSeq, the open transaction's change sequence values are counted in memory:
 * each still one higher than the last, and nothing else can take one meanwhile (the transaction holds the
 * write lock). Only for a run that writes them back before it commits and drops them when it rolls back (a
 * push batch without savepoints: a savepoint rolled back would not give its value back).
 */
export function holdServerSeq(conn: Conn): void {
  const sqlite = rawSqlite(conn)
  if (!sqlite.inTransaction) throw new Error('holdServerSeq must run inside a write transaction')
  if (!heldSeqs.has(sqlite)) heldSeqs.set(sqlite, { value: currentServerSeq(sqlite) })
}

/** Stores the last value counted since holdServerSeq and stops holding; call before the transaction commits. */
export function writeHeldServerSeq(conn: Conn): void {
  const sqlite = rawSqlite(conn)
  const held = heldSeqs.get(sqlite)
  if (!held) return
  heldSeqs.delete(sqlite)
  seqStatements(sqlite).set.run(held.value)
}

/** Stops holding change sequence values, dropping the count (its transaction is rolled back). */
export function dropHeldServerSeq(conn: Conn): void {
  heldSeqs.delete(rawSqlite(conn))
}

/**
 * Runs `work` in one `BEGIN IMMEDIATE` transaction, handing it a fresh change sequence value.
 * Called inside an open transaction it becomes a savepoint with a value of its own, which is still ordered.
 */
export function writeTransaction<T>(conn: Conn, work: (serverSeq: number) => T): T {
  const sqlite = rawSqlite(conn)
  const run = sqlite.transaction(() => work(nextServerSeq(sqlite)))
  // IMMEDIATE takes the write lock up front, so the transaction cannot fail half-way with SQLITE_BUSY.
  return sqlite.inTransaction ? run() : run.immediate()
}

/**
 * Rows of one table that a push batch holds in memory while it runs and writes one after another before it
 * commits, with one prepared statement per table and connection. Writing each table's rows together instead
 * of between the other writes of every mutation made the push about a sixth cheaper (tests/bench/push.bench.ts;
 * multi-row INSERTs of 64 rows were slower than one row a statement). Held rows are per connection; holding is
 * only switched on inside one synchronous transaction, which writes them before it commits or drops them as
 * it rolls back. Whatever reads the table through its repository writes the held rows first, so no read can
 * miss one.
 */
export class HeldRows {
  private readonly held = new WeakMap<Sqlite, unknown[][]>()
  private readonly statements = new WeakMap<Sqlite, BetterSqlite3.Statement<unknown[]>>()

  constructor(
    private readonly table: string,
    private readonly columns: readonly string[],
  ) {}

  /** Holds the connection's rows of this table from now on (the transaction must already be open). */
  hold(conn: Conn): void {
    const sqlite = rawSqlite(conn)
    if (!sqlite.inTransaction) throw new Error(`HeldRows(${this.table}).hold must run inside a transaction`)
    if (!this.held.has(sqlite)) this.held.set(sqlite, [])
  }

  /** Inserts a row (values in column order), or keeps it for later while rows are held. */
  add(conn: Conn, values: unknown[]): void {
    const sqlite = rawSqlite(conn)
    const rows = this.held.get(sqlite)
    if (rows) rows.push(values)
    else this.statement(sqlite).run(values)
  }

  /** Writes the held rows in the order they were added; holding goes on. */
  write(conn: Conn): void {
    const sqlite = rawSqlite(conn)
    const rows = this.held.get(sqlite)
    if (!rows || rows.length === 0) return
    this.held.set(sqlite, [])
    const statement = this.statement(sqlite)
    for (const values of rows) statement.run(values)
  }

  /** Stops holding; rows still held are dropped with the transaction that is being rolled back. */
  drop(conn: Conn): void {
    this.held.delete(rawSqlite(conn))
  }

  private statement(sqlite: Sqlite): BetterSqlite3.Statement<unknown[]> {
    let statement = this.statements.get(sqlite)
    if (!statement) {
      statement = sqlite.prepare(
        `INSERT INTO ${this.table} (${this.columns.join(', ')}) VALUES (${this.columns.map(() => '?').join(', ')})`,
      )
      this.statements.set(sqlite, statement)
    }
    return statement
  }
}

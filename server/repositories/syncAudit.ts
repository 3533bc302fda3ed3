import type BetterSqlite3 from 'better-sqlite3'
import { type Conn, rawSqlite, type Sqlite } from '#db/client'
import type { AuditOutcome } from '#db/schema/values'
import type { Change } from './audit'

// The same rows as audit.ts writes, through one prepared statement per connection: a push writes an audit
// row for every mutation, and building and preparing a Drizzle insert each time cost it ~7× the insert
// (tests/bench/push.bench.ts). audit.ts could adopt this and this file go away.

interface Row {
  at: string
  userId: string | null
  clientId: string | null
  entity: string
  entityId: string
  field: string | null
  oldValue: string | null
  newValue: string | null
  outcome: AuditOutcome
  mutationSeq: number | null
}

const cache = new WeakMap<Sqlite, BetterSqlite3.Statement<[Row]>>()

function insert(conn: Conn, row: Row): void {
  const sqlite = rawSqlite(conn)
  let statement = cache.get(sqlite)
  if (!statement) {
    statement = sqlite.prepare(
      `INSERT INTO audit_log (at, user_id, client_id, entity, entity_id, field, old_value, new_value, outcome, mutation_seq)
       VALUES (@at, @userId, @clientId, @entity, @entityId, @field, @oldValue, @newValue, @outcome, @mutationSeq)`,
    )
    cache.set(sqlite, statement)
  }
  statement.run(row)
}

// Drizzle's json mode stores JSON.stringify(value); null stays SQL NULL, as it does there.
const json = (value: unknown) => (value === null || value === undefined ? null : JSON.stringify(value))

function base(change: Change) {
  return {
    at: change.at,
    userId: change.userId,
    clientId: change.clientId ?? null,
    entity: change.entity,
    entityId: change.entityId,
    mutationSeq: change.mutationSeq ?? null,
  }
}

/** Appends one audit row for a whole-record event (created, deleted, rejected …), as audit.ts recordEvent. */
export function recordEvent(conn: Conn, change: Change, outcome: AuditOutcome, value?: unknown): void {
  insert(conn, { ...base(change), field: null, oldValue: null, newValue: json(value), outcome })
}

/** Appends one audit row per field whose value differs between `before` and `after`, as audit.ts does. */
export function recordFieldChanges(
  conn: Conn,
  change: Change,
  before: Record<string, unknown>,
  after: Record<string, unknown>,
  outcome: AuditOutcome = 'applied',
): void {
  for (const field of Object.keys(after)) {
    if (field === 'serverSeq') continue
    if (JSON.stringify(before[field] ?? null) === JSON.stringify(after[field] ?? null)) continue
    insert(conn, {
      ...base(change),
      field,
      oldValue: json(before[field]),
      newValue: json(after[field]),
      outcome,
    })
  }
}

import { and, count, desc, eq } from 'drizzle-orm'
import type BetterSqlite3 from 'better-sqlite3'
import { type Conn, rawSqlite, type Sqlite } from '#db/client'
import { auditLog, users } from '#db/schema/index'
import { dbOf } from './records'

export interface Change {
  userId: string | null
  clientId?: string | null
  entity: string
  entityId: string
  at: string
  mutationSeq?: number | null
}

type AuditOutcome = (typeof auditLog.$inferInsert)['outcome']

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

// One prepared statement per connection: a push writes audit rows for every mutation, and building a
// Drizzle insert each time cost about 7× the insert itself (tests/bench/push.bench.ts).
const statements = new WeakMap<Sqlite, BetterSqlite3.Statement<[Row]>>()

function insert(conn: Conn, row: Row): void {
  const sqlite = rawSqlite(conn)
  let statement = statements.get(sqlite)
  if (!statement) {
    statement = sqlite.prepare(
      `INSERT INTO audit_log (at, user_id, client_id, entity, entity_id, field, old_value, new_value, outcome, mutation_seq)
       VALUES (@at, @userId, @clientId, @entity, @entityId, @field, @oldValue, @newValue, @outcome, @mutationSeq)`,
    )
    statements.set(sqlite, statement)
  }
  statement.run(row)
}

// Stored as JSON text, as the column's json mode reads it; null stays SQL NULL.
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

/** Appends one audit row per field whose value differs between `before` and `after`. */
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

/** Appends one audit row for a whole-record event (created, deleted, rejected …). */
export function recordEvent(conn: Conn, change: Change, outcome: AuditOutcome, value?: unknown): void {
  insert(conn, { ...base(change), field: null, oldValue: null, newValue: json(value), outcome })
}

/** The audit trail of one record, newest first, with the author's name. */
export function listAudit(
  conn: Conn,
  entity: string,
  entityId: string,
  page: { limit: number; offset: number },
) {
  const db = dbOf(conn)
  const where = and(eq(auditLog.entity, entity), eq(auditLog.entityId, entityId))
  const items = db
    .select({
      id: auditLog.id,
      at: auditLog.at,
      userId: auditLog.userId,
      userName: users.name,
      clientId: auditLog.clientId,
      field: auditLog.field,
      oldValue: auditLog.oldValue,
      newValue: auditLog.newValue,
      outcome: auditLog.outcome,
      mutationSeq: auditLog.mutationSeq,
    })
    .from(auditLog)
    .leftJoin(users, eq(users.id, auditLog.userId))
    .where(where)
    .orderBy(desc(auditLog.id))
    .limit(page.limit)
    .offset(page.offset)
    .all()
  const total = db.select({ n: count() }).from(auditLog).where(where).get()?.n ?? 0
  return { items, total, ...page }
}

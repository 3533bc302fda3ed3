import { and, count, desc, eq } from 'drizzle-orm'
import { type Conn, HeldRows } from '#db/client'
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

// Written with statements prepared once per connection: a push writes audit rows for every mutation, and
// building a Drizzle insert each time cost about 7× the insert itself (tests/bench/push.bench.ts). A push
// batch holds its rows and writes them together at its end (holdAuditRows).
const held = new HeldRows('audit_log', [
  'at',
  'user_id',
  'client_id',
  'entity',
  'entity_id',
  'field',
  'old_value',
  'new_value',
  'outcome',
  'mutation_seq',
])

function insert(
  conn: Conn,
  change: Change,
  field: string | null,
  oldValue: string | null,
  newValue: string | null,
  outcome: AuditOutcome,
): void {
  const values = [
    change.at,
    change.userId,
    change.clientId ?? null,
    change.entity,
    change.entityId,
    field,
    oldValue,
    newValue,
    outcome,
    change.mutationSeq ?? null,
  ]
  held.add(conn, values)
}

/**
 * From now until the transaction ends, the connection's audit rows are held and written together by
 * writeHeldAuditRows, in the order they were recorded (the ids follow it). Only for a run that answers for
 * all its writes at once (a push batch without savepoints): a savepoint rolled back would not take held rows
 * with it. Reading the trail through this module or syncReads writes the held rows first.
 */
export function holdAuditRows(conn: Conn): void {
  held.hold(conn)
}

/** Writes the held audit rows; call before the transaction commits. */
export function writeHeldAuditRows(conn: Conn): void {
  held.write(conn)
}

/** Stops holding audit rows, dropping any still held (their transaction is rolled back or done). */
export function dropHeldAuditRows(conn: Conn): void {
  held.drop(conn)
}

// Stored as JSON text, as the column's json mode reads it; null stays SQL NULL.
const json = (value: unknown) => (value === null || value === undefined ? null : JSON.stringify(value))

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
    insert(conn, change, field, json(before[field]), json(after[field]), outcome)
  }
}

/** Appends one audit row for a whole-record event (created, deleted, rejected …). */
export function recordEvent(conn: Conn, change: Change, outcome: AuditOutcome, value?: unknown): void {
  insert(conn, change, null, null, json(value), outcome)
}

/** The audit trail of one record, newest first, with the author's name. */
export function listAudit(
  conn: Conn,
  entity: string,
  entityId: string,
  page: { limit: number; offset: number },
) {
  writeHeldAuditRows(conn)
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

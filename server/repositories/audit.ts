import { and, count, desc, eq } from 'drizzle-orm'
import type { Conn } from '#db/client'
import { auditLog, users } from '#db/schema/index'
import { dbOf } from './records'

type AuditInsert = typeof auditLog.$inferInsert

export interface Change {
  userId: string | null
  clientId?: string | null
  entity: string
  entityId: string
  at: string
  mutationSeq?: number | null
}

/** Appends one audit row per field whose value differs between `before` and `after`. */
export function recordFieldChanges(
  conn: Conn,
  change: Change,
  before: Record<string, unknown>,
  after: Record<string, unknown>,
  outcome: AuditInsert['outcome'] = 'applied',
): void {
  const rows: AuditInsert[] = []
  for (const field of Object.keys(after)) {
    if (field === 'serverSeq') continue
    if (JSON.stringify(before[field] ?? null) === JSON.stringify(after[field] ?? null)) continue
    rows.push({ ...change, field, oldValue: before[field] ?? null, newValue: after[field] ?? null, outcome })
  }
  if (rows.length) dbOf(conn).insert(auditLog).values(rows).run()
}

/** Appends one audit row for a whole-record event (created, deleted, rejected …). */
export function recordEvent(
  conn: Conn,
  change: Change,
  outcome: AuditInsert['outcome'],
  value?: unknown,
): void {
  dbOf(conn)
    .insert(auditLog)
    .values({ ...change, field: null, oldValue: null, newValue: value ?? null, outcome })
    .run()
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

import { and, eq, sql, type SQL } from 'drizzle-orm'
import { z } from 'zod'
import { closures, splices, users } from '#db/schema/index'
import { closureStateSchema, idSchema, pageQuerySchema } from '#shared/schemas/index'
import type { AppContext } from '../context'
import { AppError } from '../errors'
import type { Actor } from '../middleware/auth'
import { listAudit } from '../repositories/audit'
import { closureRollup, projectBoard, projectBoardSummary } from '../repositories/board'
import { dbOf } from '../repositories/records'
import { loadProjectLimits } from '../repositories/splices'
import { closureScope } from './access'
import { getClosure } from './closures'
import { getProject } from './projects'
import { getSplice } from './splices'
import { isUuid } from './context'

export const boardQuerySchema = pageQuerySchema
  .extend({
    sort: z.enum(['label', 'completion', 'overTarget', 'lastActivity', 'routePosition']).default('label'),
    dir: z.enum(['asc', 'desc']).default('asc'),
    state: closureStateSchema.optional(),
    crewId: idSchema.optional(),
    q: z.string().trim().min(1).max(80).optional(),
    /** Also roll up every closure the filters match (for the board's charts). */
    summary: z.enum(['true', 'false']).optional(),
  })
  .strict()

/** Every closure of a project with its maintained totals, narrowed to the actor's scope. */
export function board(ctx: AppContext, actor: Actor, projectId: unknown, query: unknown) {
  const project = getProject(ctx, actor, projectId)
  const q = boardQuerySchema.parse(query)
  const scoped = { ...q }
  if (actor.role === 'foreman' || actor.role === 'splicer') {
    if (q.crewId && q.crewId !== actor.crewId)
      return { items: [], total: 0, limit: q.limit, offset: q.offset }
    scoped.crewId = actor.crewId ?? '00000000-0000-0000-0000-000000000000'
  }
  if (actor.role === 'inspector') {
    if (q.state && q.state !== 'signed_off') return { items: [], total: 0, limit: q.limit, offset: q.offset }
    scoped.state = 'signed_off'
  }
  const page = projectBoard(ctx.database.db, project.id, scoped)
  if (q.summary === 'true') {
    const summary = projectBoardSummary(ctx.database.db, project.id, scoped)
    return { ...page, limit: q.limit, offset: q.offset, summary }
  }
  return { ...page, limit: q.limit, offset: q.offset }
}

/** One closure's roll-up from the maintained totals. */
export function rollup(ctx: AppContext, actor: Actor, closureId: unknown) {
  const closure = getClosure(ctx, actor, closureId)
  const totals = closureRollup(ctx.database.db, closure.id)
  if (!totals) throw new AppError('not_found', 'The closure has no totals yet.', 404)
  return { ...totals, closureId: closure.id, label: closure.label, state: closure.state }
}

export const productionQuerySchema = z
  .object({
    from: z.iso.date(),
    to: z.iso.date().optional(),
    splicerId: idSchema.optional(),
  })
  .strict()

/** Attempts made, re-splices among them and attempts over the estimate target, per splicer per UTC day of the device time. */
export function production(ctx: AppContext, actor: Actor, projectId: unknown, query: unknown) {
  const project = getProject(ctx, actor, projectId)
  const q = productionQuerySchema.parse(query)
  const to = q.to ?? q.from
  if (to < q.from)
    throw new AppError('invalid_input', 'The period ends before it starts.', 400, [
      { path: 'to', message: 'On or after from.' },
    ])
  const limits = loadProjectLimits(ctx.database.sqlite, project.id)
  const target = (limits?.estimate.contractTargetDb ?? 0.1) + 5e-4
  const end = new Date(`${to}T00:00:00Z`)
  end.setUTCDate(end.getUTCDate() + 1)
  const filters: (SQL | undefined)[] = [
    eq(closures.projectId, project.id),
    eq(splices.deleted, false),
    sql`${splices.splicedAt} >= ${q.from} AND ${splices.splicedAt} < ${end.toISOString().slice(0, 10)}`,
    closureScope(actor),
  ]
  if (q.splicerId) filters.push(eq(splices.splicerId, q.splicerId))
  const day = sql<string>`substr(${splices.splicedAt}, 1, 10)`
  const rows = dbOf(ctx.database.sqlite)
    .select({
      day,
      splicerId: splices.splicerId,
      splicerName: users.name,
      crewId: users.crewId,
      splices: sql<number>`count(*)`,
      resplices: sql<number>`sum(${splices.attempt} > 1)`,
      overTarget: sql<number>`coalesce(sum(${splices.lossDb} > ${target}), 0)`,
      closures: sql<number>`count(distinct ${splices.closureId})`,
    })
    .from(splices)
    .innerJoin(closures, eq(closures.id, splices.closureId))
    .innerJoin(users, eq(users.id, splices.splicerId))
    .where(and(...filters))
    .groupBy(day, splices.splicerId)
    .orderBy(day, users.name)
    .all()
  return { projectId: project.id, from: q.from, to, items: rows }
}

export const auditQuerySchema = pageQuerySchema
  .extend({
    entity: z.enum(['project', 'cable', 'closure', 'tray', 'plan_row', 'splice', 'user', 'crew']),
    entityId: idSchema,
  })
  .strict()

/** The audit trail of one record; foremen and inspectors only for records inside their scope. */
export function audit(ctx: AppContext, actor: Actor, query: unknown) {
  const q = auditQuerySchema.parse(query)
  if (actor.role !== 'office') {
    if (!isUuid(q.entityId)) throw new AppError('not_found', 'The record was not found.', 404)
    if (q.entity === 'closure') getClosure(ctx, actor, q.entityId)
    else if (q.entity === 'splice') getSplice(ctx, actor, q.entityId)
    else throw new AppError('forbidden', 'Only the office reads the audit trail of this kind of record.', 403)
  }
  return listAudit(ctx.database.db, q.entity, q.entityId, q)
}

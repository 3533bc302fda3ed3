import { and, asc, desc, eq, gte, lt, sql, type SQL } from 'drizzle-orm'
import { z } from 'zod'
import { closures, splices } from '#db/schema/index'
import { idSchema, pageQuerySchema } from '#shared/schemas/index'
import type { AppContext } from '../context'
import { notFound } from '../errors'
import type { Actor } from '../middleware/auth'
import { dbOf } from '../repositories/records'
import { closureScope, visibleClosure } from './access'
import { isUuid } from './context'

const daySchema = z.iso.date()

export const spliceListQuerySchema = pageQuerySchema
  .extend({
    closureId: idSchema.optional(),
    trayId: idSchema.optional(),
    splicerId: idSchema.optional(),
    /** A calendar day (YYYY-MM-DD) of the device's spliced-at time, in UTC. */
    day: daySchema.optional(),
    flagged: z.enum(['true', 'false']).optional(),
    /** Superseded attempts are history; list them only when asked. */
    current: z.enum(['true', 'false', 'all']).default('true'),
    sort: z.enum(['splicedAt', 'slot', 'lossDb']).default('splicedAt'),
    dir: z.enum(['asc', 'desc']).default('desc'),
  })
  .strict()

/** Splices within the actor's scope, filtered, sorted and paginated in SQL. */
export function listSplices(ctx: AppContext, actor: Actor, query: unknown) {
  const q = spliceListQuerySchema.parse(query)
  const db = dbOf(ctx.database.sqlite)
  const filters: (SQL | undefined)[] = [eq(splices.deleted, false), closureScope(actor)]
  if (q.closureId) filters.push(eq(splices.closureId, q.closureId))
  if (q.trayId) filters.push(eq(splices.trayId, q.trayId))
  if (q.splicerId) filters.push(eq(splices.splicerId, q.splicerId))
  if (q.day) {
    const next = new Date(`${q.day}T00:00:00Z`)
    next.setUTCDate(next.getUTCDate() + 1)
    filters.push(
      gte(splices.splicedAt, `${q.day}T00:00:00`),
      lt(splices.splicedAt, next.toISOString().slice(0, 10)),
    )
  }
  if (q.flagged === 'true') filters.push(sql`json_array_length(${splices.flags}) > 0`)
  if (q.flagged === 'false') filters.push(sql`json_array_length(${splices.flags}) = 0`)
  if (q.current !== 'all') filters.push(eq(splices.isCurrent, q.current === 'true'))
  const where = and(...filters)
  const column = { splicedAt: splices.splicedAt, slot: splices.slot, lossDb: splices.lossDb }[q.sort]
  const items = db
    .select({ splice: splices })
    .from(splices)
    .innerJoin(closures, eq(closures.id, splices.closureId))
    .where(where)
    .orderBy(q.dir === 'asc' ? asc(column) : desc(column), asc(splices.id))
    .limit(q.limit)
    .offset(q.offset)
    .all()
    .map((r) => r.splice)
  const total =
    db
      .select({ n: sql<number>`count(*)` })
      .from(splices)
      .innerJoin(closures, eq(closures.id, splices.closureId))
      .where(where)
      .get()?.n ?? 0
  return { items, total, limit: q.limit, offset: q.offset }
}

/** One splice, when its closure is within the actor's scope. */
export function getSplice(ctx: AppContext, actor: Actor, spliceId: unknown) {
  if (!isUuid(spliceId)) throw notFound('The splice')
  const db = dbOf(ctx.database.sqlite)
  const row = db
    .select({ splice: splices, closure: closures })
    .from(splices)
    .innerJoin(closures, eq(closures.id, splices.closureId))
    .where(and(eq(splices.id, spliceId), eq(splices.deleted, false)))
    .get()
  if (!row) throw notFound('The splice')
  visibleClosure(actor, row.closure)
  return row.splice
}

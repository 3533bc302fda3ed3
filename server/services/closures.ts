import { and, asc, desc, eq, inArray, sql, type SQL } from 'drizzle-orm'
import { z } from 'zod'
import { writeTransaction } from '#db/client'
import { closureAssignments, closures, crews, planRows, splices, trays, users } from '#db/schema/index'
import {
  closureCreateSchema,
  closureKindSchema,
  closureStateSchema,
  closureUpdateSchema,
  idSchema,
  pageQuerySchema,
  trayCreateSchema,
  trayUpdateSchema,
  type PageQuery,
} from '#shared/schemas/index'
import type { AppContext } from '../context'
import { AppError, notFound } from '../errors'
import type { Actor } from '../middleware/auth'
import { recordEvent, recordFieldChanges } from '../repositories/audit'
import { dbOf, recordsOf } from '../repositories/records'
import { assertLeadsClosure, closureScope, visibleClosure } from './access'
import { isUuid, withParent } from './context'
import { getProject } from './projects'

const closureRecords = recordsOf(closures)
const trayRecords = recordsOf(trays)
const now = () => new Date().toISOString()

export const closureListQuerySchema = pageQuerySchema
  .extend({
    state: closureStateSchema.optional(),
    kind: closureKindSchema.optional(),
    crewId: idSchema.optional(),
    q: z.string().trim().min(1).max(80).optional(),
    sort: z.enum(['label', 'routePosition']).default('label'),
    dir: z.enum(['asc', 'desc']).default('asc'),
  })
  .strict()

/** One closure the actor may see (404 otherwise, including another crew's). */
export function getClosure(ctx: AppContext, actor: Actor, closureId: unknown) {
  if (!isUuid(closureId)) throw notFound('The closure')
  return visibleClosure(actor, closureRecords.get(ctx.database.db, closureId))
}

/** A project's closures within the actor's scope, filtered and sorted on the server. */
export function listClosures(ctx: AppContext, actor: Actor, projectId: unknown, query: unknown) {
  const project = getProject(ctx, actor, projectId)
  const q = closureListQuerySchema.parse(query)
  const filters: (SQL | undefined)[] = [eq(closures.projectId, project.id), closureScope(actor)]
  if (q.state) filters.push(eq(closures.state, q.state))
  if (q.kind) filters.push(eq(closures.kind, q.kind))
  if (q.crewId) filters.push(eq(closures.crewId, q.crewId))
  if (q.q) {
    const pattern = `%${q.q.replace(/[%_\\]/g, '\\$&')}%`
    filters.push(sql`${closures.label} LIKE ${pattern} ESCAPE '\\'`)
  }
  const column = q.sort === 'routePosition' ? closures.routePositionM : closures.label
  return closureRecords.list(
    ctx.database.db,
    and(...filters),
    q,
    q.dir === 'asc' ? asc(column) : desc(column),
  )
}

export function createClosure(ctx: AppContext, actor: Actor, projectId: unknown, body: unknown) {
  const project = getProject(ctx, actor, projectId)
  const input = closureCreateSchema.parse(withParent(body, 'projectId', project.id))
  return writeTransaction(ctx.database.sqlite, (seq) => {
    if (closureRecords.get(ctx.database.db, input.id))
      throw new AppError('conflict', 'That id is taken.', 409)
    const row = closureRecords.insert(ctx.database.db, { ...input, state: 'planned' }, seq)
    recordEvent(
      ctx.database.db,
      { userId: actor.id, entity: 'closure', entityId: row.id, at: now() },
      'created',
      input,
    )
    return row
  })
}

export function updateClosure(ctx: AppContext, actor: Actor, closureId: unknown, body: unknown) {
  const before = getClosure(ctx, actor, closureId)
  const patch = closureUpdateSchema.parse(body)
  const merged = { ...before, ...patch }
  if ((merged.lat === null) !== (merged.lon === null)) {
    throw new AppError('invalid_input', 'Give both latitude and longitude, or neither.', 400, [
      { path: merged.lat === null ? 'lat' : 'lon', message: 'Give both latitude and longitude, or neither.' },
    ])
  }
  return writeTransaction(ctx.database.sqlite, (seq) => {
    const after = closureRecords.update(ctx.database.db, before.id, patch, seq)
    recordFieldChanges(
      ctx.database.db,
      { userId: actor.id, entity: 'closure', entityId: before.id, at: now() },
      before,
      patch,
    )
    return after
  })
}

export const assignmentSchema = z
  .object({
    /** The crew that works the closure; only the office may move a closure to another crew. */
    crewId: idSchema.nullable().optional(),
    /** Splicers in the order they should work it today; replaces the current list. */
    splicerIds: z.array(idSchema).max(20),
  })
  .strict()

/** Sets who works a closure and in what order; a foreman may only arrange their own crew's splicers. */
export function assignClosure(ctx: AppContext, actor: Actor, closureId: unknown, body: unknown) {
  const closure = getClosure(ctx, actor, closureId)
  assertLeadsClosure(actor, closure)
  const input = assignmentSchema.parse(body)
  if (input.crewId !== undefined && input.crewId !== closure.crewId && actor.role !== 'office') {
    throw new AppError('forbidden', 'Only the office may hand a closure to another crew.', 403)
  }
  const crewId = input.crewId === undefined ? closure.crewId : input.crewId
  const db = ctx.database.db
  const people = input.splicerIds.length
    ? db.select().from(users).where(inArray(users.id, input.splicerIds)).all()
    : []
  const problems = input.splicerIds.flatMap((id, i) => {
    const user = people.find((p) => p.id === id)
    if (!user || !user.active) return [{ path: `splicerIds.${i}`, message: 'No active user has this id.' }]
    if (user.role !== 'splicer' && user.role !== 'foreman')
      return [{ path: `splicerIds.${i}`, message: `${user.name} is not field crew.` }]
    if (user.crewId !== crewId)
      return [{ path: `splicerIds.${i}`, message: `${user.name} is not in the closure's crew.` }]
    return []
  })
  if (new Set(input.splicerIds).size !== input.splicerIds.length) {
    problems.push({ path: 'splicerIds', message: 'A splicer is listed twice.' })
  }
  if (problems.length) throw new AppError('invalid_input', 'The assignment cannot be made.', 400, problems)

  return writeTransaction(ctx.database.sqlite, (seq) => {
    const tx = dbOf(ctx.database.sqlite)
    const change = { userId: actor.id, entity: 'closure', entityId: closure.id, at: now() }
    if (crewId !== closure.crewId) {
      closureRecords.update(tx, closure.id, { crewId }, seq)
      recordFieldChanges(tx, change, closure, { crewId })
    }
    const current = tx
      .select()
      .from(closureAssignments)
      .where(eq(closureAssignments.closureId, closure.id))
      .all()
    const before = current
      .filter((a) => !a.deleted)
      .sort((a, b) => a.position - b.position)
      .map((a) => a.userId)
    for (const row of current) {
      if (!input.splicerIds.includes(row.userId) && !row.deleted) {
        tx.update(closureAssignments)
          .set({ deleted: true, serverSeq: seq })
          .where(and(eq(closureAssignments.closureId, closure.id), eq(closureAssignments.userId, row.userId)))
          .run()
      }
    }
    // position is the closure's place in each splicer's day: a splicer new to the closure gets it last.
    input.splicerIds.forEach((userId) => {
      const position = dayEnd(tx, userId)
      tx.insert(closureAssignments)
        .values({
          closureId: closure.id,
          userId,
          position,
          assignedBy: actor.id,
          assignedAt: now(),
          serverSeq: seq,
        })
        .onConflictDoUpdate({
          target: [closureAssignments.closureId, closureAssignments.userId],
          set: {
            position: sql`CASE WHEN ${closureAssignments.deleted} THEN ${position} ELSE ${closureAssignments.position} END`,
            assignedBy: actor.id,
            assignedAt: now(),
            serverSeq: seq,
            deleted: false,
          },
        })
        .run()
    })
    recordFieldChanges(tx, change, { splicers: before }, { splicers: input.splicerIds })
    return getAssignment(ctx, closure.id)
  })
}

/** One past the last place in a user's day. */
function dayEnd(db: ReturnType<typeof dbOf>, userId: string): number {
  const row = db
    .select({ max: sql<number | null>`max(${closureAssignments.position})` })
    .from(closureAssignments)
    .where(and(eq(closureAssignments.userId, userId), eq(closureAssignments.deleted, false)))
    .get()
  return (row?.max ?? 0) + 1
}

export const daySchema = z
  .object({
    /** The crew member whose day this is. */
    userId: idSchema,
    /** The closures they work, in the order of the day; closures left out are taken off their list. */
    closureIds: z.array(idSchema).max(200),
  })
  .strict()

function assertLeadsCrew(actor: Actor, crewId: unknown): string {
  if (!isUuid(crewId)) throw notFound('The crew')
  if (actor.role === 'office') return crewId
  if (actor.role === 'foreman' && actor.crewId === crewId) return crewId
  throw notFound('The crew')
}

/** Each member of a crew with the closures of their day in order (open closures of the crew only). */
export function crewDay(ctx: AppContext, actor: Actor, crewId: unknown) {
  const crew = assertLeadsCrew(actor, crewId)
  const db = ctx.database.db
  if (!db.select({ id: crews.id }).from(crews).where(eq(crews.id, crew)).get()) throw notFound('The crew')
  const members = db
    .select({ id: users.id, name: users.name, role: users.role })
    .from(users)
    .where(and(eq(users.crewId, crew), eq(users.active, true), inArray(users.role, ['splicer', 'foreman'])))
    .orderBy(asc(users.name))
    .all()
  const rows = db
    .select({
      userId: closureAssignments.userId,
      closureId: closures.id,
      label: closures.label,
      state: closures.state,
      position: closureAssignments.position,
    })
    .from(closureAssignments)
    .innerJoin(closures, eq(closures.id, closureAssignments.closureId))
    .where(and(eq(closures.crewId, crew), eq(closureAssignments.deleted, false), eq(closures.deleted, false)))
    .orderBy(asc(closureAssignments.position), asc(closures.label))
    .all()
  return {
    crewId: crew,
    members: members.map((member) => ({
      ...member,
      closures: rows
        .filter((row) => row.userId === member.id)
        .map(({ closureId, label, state, position }) => ({ closureId, label, state, position })),
    })),
  }
}

/** Sets one crew member's day: the closures they work and in which order (positions 1, 2, …). */
export function setCrewDay(ctx: AppContext, actor: Actor, crewId: unknown, body: unknown) {
  const crew = assertLeadsCrew(actor, crewId)
  const input = daySchema.parse(body)
  const db = ctx.database.db
  const member = db.select().from(users).where(eq(users.id, input.userId)).get()
  const problems: { path: string; message: string }[] = []
  if (!member || !member.active || member.crewId !== crew)
    problems.push({ path: 'userId', message: 'Not an active member of this crew.' })
  else if (member.role !== 'splicer' && member.role !== 'foreman')
    problems.push({ path: 'userId', message: `${member.name} is not field crew.` })
  if (new Set(input.closureIds).size !== input.closureIds.length)
    problems.push({ path: 'closureIds', message: 'A closure is listed twice.' })
  const found = input.closureIds.length
    ? db.select().from(closures).where(inArray(closures.id, input.closureIds)).all()
    : []
  // A signed-off closure already on the day may stay and move; it cannot be put on anyone's day anew.
  const onDay = new Set(
    db
      .select({ closureId: closureAssignments.closureId })
      .from(closureAssignments)
      .where(and(eq(closureAssignments.userId, input.userId), eq(closureAssignments.deleted, false)))
      .all()
      .map((row) => row.closureId),
  )
  input.closureIds.forEach((id, i) => {
    const closure = found.find((row) => row.id === id)
    if (!closure || closure.deleted || closure.crewId !== crew)
      problems.push({ path: `closureIds.${i}`, message: 'Not a closure of this crew.' })
    else if (closure.state === 'signed_off' && !onDay.has(closure.id))
      problems.push({ path: `closureIds.${i}`, message: `${closure.label} is signed off; reopen it first.` })
  })
  if (problems.length) throw new AppError('invalid_input', 'The day cannot be set.', 400, problems)

  writeTransaction(ctx.database.sqlite, (seq) => {
    const tx = dbOf(ctx.database.sqlite)
    const current = tx
      .select()
      .from(closureAssignments)
      .where(eq(closureAssignments.userId, input.userId))
      .all()
    const before = current
      .filter((row) => !row.deleted)
      .sort((a, b) => a.position - b.position)
      .map((row) => row.closureId)
    if (JSON.stringify(before) === JSON.stringify(input.closureIds)) return
    const at = now()
    for (const row of current) {
      if (row.deleted || input.closureIds.includes(row.closureId)) continue
      tx.update(closureAssignments)
        .set({ deleted: true, serverSeq: seq })
        .where(
          and(eq(closureAssignments.closureId, row.closureId), eq(closureAssignments.userId, row.userId)),
        )
        .run()
    }
    input.closureIds.forEach((closureId, i) => {
      const position = i + 1
      const had = current.find((row) => row.closureId === closureId)
      if (had && !had.deleted && had.position === position) return
      tx.insert(closureAssignments)
        .values({
          closureId,
          userId: input.userId,
          position,
          assignedBy: actor.id,
          assignedAt: at,
          serverSeq: seq,
        })
        .onConflictDoUpdate({
          target: [closureAssignments.closureId, closureAssignments.userId],
          set: { position, assignedBy: actor.id, assignedAt: at, serverSeq: seq, deleted: false },
        })
        .run()
    })
    recordFieldChanges(
      tx,
      { userId: actor.id, entity: 'user', entityId: input.userId, at },
      { day: before },
      { day: input.closureIds },
    )
  })
  return crewDay(ctx, actor, crew)
}

/** The closure's crew and its ordered splicers. */
export function getAssignment(ctx: AppContext, closureId: string) {
  const db = ctx.database.db
  const closure = closureRecords.get(db, closureId)
  const splicers = db
    .select({ id: users.id, name: users.name, position: closureAssignments.position })
    .from(closureAssignments)
    .innerJoin(users, eq(users.id, closureAssignments.userId))
    .where(and(eq(closureAssignments.closureId, closureId), eq(closureAssignments.deleted, false)))
    .orderBy(asc(closureAssignments.position))
    .all()
  return { closureId, crewId: closure?.crewId ?? null, splicers }
}

export function listTrays(ctx: AppContext, actor: Actor, closureId: unknown, page: PageQuery) {
  const closure = getClosure(ctx, actor, closureId)
  return trayRecords.list(ctx.database.db, eq(trays.closureId, closure.id), page, asc(trays.number))
}

export function createTray(ctx: AppContext, actor: Actor, closureId: unknown, body: unknown) {
  const closure = getClosure(ctx, actor, closureId)
  const input = trayCreateSchema.parse(withParent(body, 'closureId', closure.id))
  return writeTransaction(ctx.database.sqlite, (seq) => {
    const db = ctx.database.db
    if (trayRecords.get(db, input.id)) throw new AppError('conflict', 'That id is taken.', 409)
    const clash = db
      .select()
      .from(trays)
      .where(and(eq(trays.closureId, closure.id), eq(trays.number, input.number), eq(trays.deleted, false)))
      .get()
    if (clash) throw new AppError('conflict', `Tray ${input.number} already exists in this closure.`, 409)
    const row = trayRecords.insert(db, input, seq)
    recordEvent(db, { userId: actor.id, entity: 'tray', entityId: row.id, at: now() }, 'created', input)
    return row
  })
}

export function updateTray(ctx: AppContext, actor: Actor, trayId: unknown, body: unknown) {
  if (!isUuid(trayId)) throw notFound('The tray')
  const db = ctx.database.db
  const before = trayRecords.get(db, trayId)
  if (!before) throw notFound('The tray')
  getClosure(ctx, actor, before.closureId)
  const patch = trayUpdateSchema.parse(body)
  if (patch.capacity !== undefined) {
    const highest = [
      ...db
        .select({ slot: planRows.slot })
        .from(planRows)
        .where(and(eq(planRows.trayId, trayId), eq(planRows.deleted, false)))
        .all(),
      ...db
        .select({ slot: splices.slot })
        .from(splices)
        .where(and(eq(splices.trayId, trayId), eq(splices.deleted, false)))
        .all(),
    ].reduce((max, r) => Math.max(max, r.slot), 0)
    if (patch.capacity < highest) {
      throw new AppError(
        'invalid_input',
        `Slot ${highest} of this tray is in use; the capacity cannot go below it.`,
        400,
        [{ path: 'capacity', message: `At least ${highest}.` }],
      )
    }
  }
  return writeTransaction(ctx.database.sqlite, (seq) => {
    if (patch.number !== undefined && patch.number !== before.number) {
      const clash = db
        .select()
        .from(trays)
        .where(
          and(
            eq(trays.closureId, before.closureId),
            eq(trays.number, patch.number),
            eq(trays.deleted, false),
          ),
        )
        .get()
      if (clash) throw new AppError('conflict', `Tray ${patch.number} already exists in this closure.`, 409)
    }
    const after = trayRecords.update(db, before.id, patch, seq)
    recordFieldChanges(
      db,
      { userId: actor.id, entity: 'tray', entityId: before.id, at: now() },
      before,
      patch,
    )
    return after
  })
}

export { closureRecords, trayRecords }

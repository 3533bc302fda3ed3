import { and, asc, eq, exists } from 'drizzle-orm'
import { writeTransaction } from '#db/client'
import { cables, closures, projects } from '#db/schema/index'
import { cableLayoutProblems } from '#shared/domain/colour'
import {
  cableCreateSchema,
  cableUpdateSchema,
  projectCreateSchema,
  projectUpdateSchema,
  type PageQuery,
} from '#shared/schemas/index'
import type { AppContext } from '../context'
import { AppError, notFound } from '../errors'
import type { Actor } from '../middleware/auth'
import { recordEvent, recordFieldChanges } from '../repositories/audit'
import { recordsOf } from '../repositories/records'
import { recomputeProjectTotals } from '../repositories/splices'
import { closureScope } from './access'
import { isUuid, withParent } from './context'

const projectRecords = recordsOf(projects)
const cableRecords = recordsOf(cables)
const now = () => new Date().toISOString()

/** Projects the actor works on: all for the office, else those with a closure in the actor's scope. */
export function listProjects(ctx: AppContext, actor: Actor, page: PageQuery) {
  const scope = closureScope(actor)
  const { db } = ctx.database
  const where = scope
    ? exists(
        db
          .select({ one: closures.id })
          .from(closures)
          .where(and(eq(closures.projectId, projects.id), eq(closures.deleted, false), scope)),
      )
    : undefined
  return projectRecords.list(db, where, page, asc(projects.code))
}

/** One project, when the actor may see it. */
export function getProject(ctx: AppContext, actor: Actor, projectId: unknown) {
  if (!isUuid(projectId)) throw notFound('The project')
  const project = projectRecords.get(ctx.database.db, projectId)
  if (!project) throw notFound('The project')
  const scope = closureScope(actor)
  if (scope) {
    const visible = ctx.database.db
      .select({ one: closures.id })
      .from(closures)
      .where(and(eq(closures.projectId, projectId), eq(closures.deleted, false), scope))
      .limit(1)
      .get()
    if (!visible) throw notFound('The project')
  }
  return project
}

export function createProject(ctx: AppContext, actor: Actor, body: unknown) {
  const input = projectCreateSchema.parse(body)
  return writeTransaction(ctx.database.sqlite, (seq) => {
    if (ctx.database.db.select().from(projects).where(eq(projects.code, input.code)).get()) {
      throw new AppError('conflict', `A project with code ${input.code} already exists.`, 409)
    }
    if (projectRecords.get(ctx.database.db, input.id))
      throw new AppError('conflict', 'That id is taken.', 409)
    const row = projectRecords.insert(ctx.database.db, input, seq)
    recordEvent(
      ctx.database.db,
      { userId: actor.id, entity: 'project', entityId: row.id, at: now() },
      'created',
      input,
    )
    return row
  })
}

export function updateProject(ctx: AppContext, actor: Actor, projectId: unknown, body: unknown) {
  const before = getProject(ctx, actor, projectId)
  const patch = projectUpdateSchema.parse(body)
  return writeTransaction(ctx.database.sqlite, (seq) => {
    if (patch.code && patch.code !== before.code) {
      const taken = ctx.database.db.select().from(projects).where(eq(projects.code, patch.code)).get()
      if (taken) throw new AppError('conflict', `A project with code ${patch.code} already exists.`, 409)
    }
    const after = projectRecords.update(ctx.database.db, before.id, patch, seq)
    recordFieldChanges(
      ctx.database.db,
      { userId: actor.id, entity: 'project', entityId: before.id, at: now() },
      before,
      patch,
    )
    // Over-target counts depend on the limits, so the maintained totals follow a change of limits.
    if (patch.limits) recomputeProjectTotals(ctx.database.db, before.id, after.limits)
    return after
  })
}

export function listCables(ctx: AppContext, actor: Actor, projectId: unknown, page: PageQuery) {
  const project = getProject(ctx, actor, projectId)
  return cableRecords.list(ctx.database.db, eq(cables.projectId, project.id), page, asc(cables.label))
}

export function getCable(ctx: AppContext, actor: Actor, cableId: unknown) {
  if (!isUuid(cableId)) throw notFound('The cable')
  const cable = cableRecords.get(ctx.database.db, cableId)
  if (!cable) throw notFound('The cable')
  getProject(ctx, actor, cable.projectId)
  return cable
}

export function createCable(ctx: AppContext, actor: Actor, projectId: unknown, body: unknown) {
  const project = getProject(ctx, actor, projectId)
  const input = cableCreateSchema.parse(withParent(body, 'projectId', project.id))
  return writeTransaction(ctx.database.sqlite, (seq) => {
    if (cableRecords.get(ctx.database.db, input.id)) throw new AppError('conflict', 'That id is taken.', 409)
    const row = cableRecords.insert(ctx.database.db, input, seq)
    recordEvent(
      ctx.database.db,
      { userId: actor.id, entity: 'cable', entityId: row.id, at: now() },
      'created',
      input,
    )
    return row
  })
}

export function updateCable(ctx: AppContext, actor: Actor, cableId: unknown, body: unknown) {
  const before = getCable(ctx, actor, cableId)
  const patch = cableUpdateSchema.parse(body)
  const merged = { ...before, ...patch }
  const problems = cableLayoutProblems(merged)
  if (problems.length) {
    throw new AppError(
      'invalid_input',
      'The cable layout does not add up.',
      400,
      problems.map((p) => ({ path: p.path.join('.'), message: p.message })),
    )
  }
  return writeTransaction(ctx.database.sqlite, (seq) => {
    const after = cableRecords.update(ctx.database.db, before.id, patch, seq)
    recordFieldChanges(
      ctx.database.db,
      { userId: actor.id, entity: 'cable', entityId: before.id, at: now() },
      before,
      patch,
    )
    return after
  })
}

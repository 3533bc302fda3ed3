import bcrypt from 'bcryptjs'
import { and, asc, count, eq, isNull, or, sql, type SQL } from 'drizzle-orm'
import { z } from 'zod'
import { writeTransaction } from '#db/client'
import { crews, refreshTokens, users } from '#db/schema/index'
import {
  crewCreateSchema,
  crewUpdateSchema,
  idSchema,
  pageQuerySchema,
  roleSchema,
  userCreateSchema,
  userUpdateSchema,
  type PageQuery,
} from '#shared/schemas/index'
import type { AppContext } from '../context'
import { AppError, notFound } from '../errors'
import type { Actor } from '../middleware/auth'
import { recordEvent, recordFieldChanges } from '../repositories/audit'
import { dbOf } from '../repositories/records'
import { isUuid } from './context'

const now = () => new Date().toISOString()

type UserRow = typeof users.$inferSelect

/** A user as the API shows it: never the password hash or token version. */
export function publicUser(user: UserRow) {
  return {
    id: user.id,
    email: user.email,
    name: user.name,
    role: user.role,
    crewId: user.crewId,
    active: user.active,
  }
}

function assertCrew(ctx: AppContext, crewId: string | null | undefined): void {
  if (!crewId) return
  if (!ctx.database.db.select().from(crews).where(eq(crews.id, crewId)).get()) {
    throw new AppError('invalid_input', 'No crew has this id.', 400, [
      { path: 'crewId', message: 'No crew has this id.' },
    ])
  }
}

export const userListQuerySchema = pageQuerySchema
  .extend({
    role: roleSchema.optional(),
    crewId: idSchema.optional(),
    active: z.enum(['true', 'false']).optional(),
    q: z.string().trim().min(1).max(80).optional(),
  })
  .strict()

/** Users filtered by role, crew, state or a part of the name or address, sorted by name. */
export function listUsers(ctx: AppContext, query: unknown) {
  const q = userListQuerySchema.parse(query)
  const db = ctx.database.db
  const filters: (SQL | undefined)[] = []
  if (q.role) filters.push(eq(users.role, q.role))
  if (q.crewId) filters.push(eq(users.crewId, q.crewId))
  if (q.active) filters.push(eq(users.active, q.active === 'true'))
  if (q.q) {
    const pattern = `%${q.q.toLowerCase().replace(/[%_\\]/g, '\\$&')}%`
    filters.push(
      or(
        sql`lower(${users.name}) LIKE ${pattern} ESCAPE '\\'`,
        sql`${users.email} LIKE ${pattern} ESCAPE '\\'`,
      ),
    )
  }
  const where = and(...filters)
  const items = db
    .select()
    .from(users)
    .where(where)
    .orderBy(asc(users.name))
    .limit(q.limit)
    .offset(q.offset)
    .all()
  const total = db.select({ n: count() }).from(users).where(where).get()?.n ?? 0
  return { items: items.map(publicUser), total, limit: q.limit, offset: q.offset }
}

export function createUser(ctx: AppContext, actor: Actor, body: unknown) {
  const input = userCreateSchema.parse(body)
  assertCrew(ctx, input.crewId)
  const passwordHash = bcrypt.hashSync(input.password, ctx.config.bcryptCost)
  return writeTransaction(ctx.database.sqlite, (seq) => {
    const db = dbOf(ctx.database.sqlite)
    if (db.select().from(users).where(eq(users.email, input.email)).get()) {
      throw new AppError('conflict', 'A user with this e-mail address already exists.', 409)
    }
    if (db.select().from(users).where(eq(users.id, input.id)).get())
      throw new AppError('conflict', 'That id is taken.', 409)
    const { password: _password, ...fields } = input
    const row = db
      .insert(users)
      .values({ ...fields, passwordHash, createdAt: now(), serverSeq: seq })
      .returning()
      .get()
    recordEvent(
      db,
      { userId: actor.id, entity: 'user', entityId: row.id, at: now() },
      'created',
      publicUser(row),
    )
    return publicUser(row)
  })
}

/** Changes a user; a role change, a new password or disabling ends every session of that user at once. */
export function updateUser(ctx: AppContext, actor: Actor, userId: unknown, body: unknown) {
  const patch = userUpdateSchema.parse(body)
  if (!isUuid(userId)) throw notFound('The user')
  const db = ctx.database.db
  const before = db.select().from(users).where(eq(users.id, userId)).get()
  if (!before) throw notFound('The user')
  assertCrew(ctx, patch.crewId)
  if (userId === actor.id && (patch.active === false || (patch.role && patch.role !== 'office'))) {
    throw new AppError(
      'invalid_input',
      'You cannot disable your own account or give up your own office role.',
      400,
    )
  }
  const { password, ...fields } = patch
  const passwordHash = password ? bcrypt.hashSync(password, ctx.config.bcryptCost) : undefined
  return writeTransaction(ctx.database.sqlite, (seq) => {
    const tx = dbOf(ctx.database.sqlite)
    if (
      fields.email &&
      fields.email !== before.email &&
      tx.select().from(users).where(eq(users.email, fields.email)).get()
    ) {
      throw new AppError('conflict', 'A user with this e-mail address already exists.', 409)
    }
    const endsSessions =
      passwordHash !== undefined ||
      fields.active === false ||
      (fields.role !== undefined && fields.role !== before.role)
    const after = tx
      .update(users)
      .set({
        ...fields,
        ...(passwordHash ? { passwordHash } : {}),
        ...(endsSessions ? { tokenVersion: before.tokenVersion + 1 } : {}),
        serverSeq: seq,
      })
      .where(eq(users.id, before.id))
      .returning()
      .get()
    // Access tokens die with the version bump; refresh tokens must be revoked too, or a stolen cookie
    // would outlive a password reset or a disabled account.
    if (endsSessions) {
      tx.update(refreshTokens)
        .set({ revokedAt: now() })
        .where(and(eq(refreshTokens.userId, before.id), isNull(refreshTokens.revokedAt)))
        .run()
    }
    recordFieldChanges(
      tx,
      { userId: actor.id, entity: 'user', entityId: before.id, at: now() },
      publicUser(before),
      {
        ...fields,
        ...(passwordHash ? { password: '(changed)' } : {}),
      },
    )
    return publicUser(after)
  })
}

export function listCrews(ctx: AppContext, page: PageQuery) {
  const db = ctx.database.db
  const items = db
    .select({ id: crews.id, name: crews.name })
    .from(crews)
    .orderBy(asc(crews.name))
    .limit(page.limit)
    .offset(page.offset)
    .all()
  return { items, total: db.select({ n: count() }).from(crews).get()?.n ?? 0, ...page }
}

export function createCrew(ctx: AppContext, actor: Actor, body: unknown) {
  const input = crewCreateSchema.parse(body)
  return writeTransaction(ctx.database.sqlite, (seq) => {
    const db = dbOf(ctx.database.sqlite)
    if (db.select().from(crews).where(eq(crews.id, input.id)).get())
      throw new AppError('conflict', 'That id is taken.', 409)
    const row = db
      .insert(crews)
      .values({ ...input, serverSeq: seq })
      .returning({ id: crews.id, name: crews.name })
      .get()
    recordEvent(db, { userId: actor.id, entity: 'crew', entityId: row.id, at: now() }, 'created', row)
    return row
  })
}

export function updateCrew(ctx: AppContext, actor: Actor, crewId: unknown, body: unknown) {
  const patch = crewUpdateSchema.parse(body)
  if (!isUuid(crewId)) throw notFound('The crew')
  const before = ctx.database.db
    .select({ id: crews.id, name: crews.name })
    .from(crews)
    .where(eq(crews.id, crewId))
    .get()
  if (!before) throw notFound('The crew')
  return writeTransaction(ctx.database.sqlite, (seq) => {
    const db = dbOf(ctx.database.sqlite)
    const after = db
      .update(crews)
      .set({ ...patch, serverSeq: seq })
      .where(eq(crews.id, crewId))
      .returning({ id: crews.id, name: crews.name })
      .get()
    recordFieldChanges(db, { userId: actor.id, entity: 'crew', entityId: crewId, at: now() }, before, patch)
    return after
  })
}

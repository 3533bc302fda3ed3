import bcrypt from 'bcryptjs'
import { and, eq, isNull } from 'drizzle-orm'
import { v7 as uuidv7 } from 'uuid'
import { refreshTokens, users } from '#db/schema/index'
import type { AppContext } from '../context'
import { unauthorized } from '../errors'
import { findActiveUser, findUserByEmail, type UserRow } from '../repositories/users'
import { hashRefreshToken, newRefreshToken, signAccessToken } from './tokens'

export interface SessionUser {
  id: string
  email: string
  name: string
  role: UserRow['role']
  crewId: string | null
}

export interface Session {
  accessToken: string
  expiresIn: number
  refreshToken: string
  refreshExpiresAt: Date
  user: SessionUser
}

// Compared against when the address is unknown, so both failures cost one bcrypt round.
const dummyHash = bcrypt.hashSync('lightseam-no-such-user', 10)
const badCredentials = () => unauthorized('The e-mail address or password is not right.')

export function toSessionUser(user: UserRow): SessionUser {
  return { id: user.id, email: user.email, name: user.name, role: user.role, crewId: user.crewId }
}

function issueSession(ctx: AppContext, user: UserRow, familyId: string, now: Date): Promise<Session> {
  const { token, hash } = newRefreshToken()
  const expiresAt = new Date(now.getTime() + ctx.config.refreshTokenDays * 86_400_000)
  ctx.database.db
    .insert(refreshTokens)
    .values({
      id: uuidv7(),
      userId: user.id,
      familyId,
      tokenHash: hash,
      createdAt: now.toISOString(),
      expiresAt: expiresAt.toISOString(),
    })
    .run()
  return signAccessToken(
    ctx.config,
    { userId: user.id, tokenVersion: user.tokenVersion },
    now.getTime(),
  ).then((accessToken) => ({
    accessToken,
    expiresIn: ctx.config.accessTokenSeconds,
    refreshToken: token,
    refreshExpiresAt: expiresAt,
    user: toSessionUser(user),
  }))
}

/** Checks e-mail and password and opens a new refresh-token family; unknown and wrong answer the same. */
export async function signIn(
  ctx: AppContext,
  email: string,
  password: string,
  now = new Date(),
): Promise<Session> {
  const user = findUserByEmail(ctx.database, email)
  const ok = await bcrypt.compare(password, user?.passwordHash ?? dummyHash)
  if (!user || !ok || !user.active) throw badCredentials()
  return issueSession(ctx, user, uuidv7(), now)
}

/**
 * Rotates a refresh token: the presented one is spent and a new one of the same family is issued.
 * Presenting a token that was already rotated means it leaked, so the whole family is revoked.
 */
export async function refresh(
  ctx: AppContext,
  presented: string | undefined,
  now = new Date(),
): Promise<Session> {
  if (!presented) throw unauthorized('No refresh token; sign in again.')
  const { db, sqlite } = ctx.database
  const outcome = sqlite.transaction(() => {
    const row = db
      .select()
      .from(refreshTokens)
      .where(eq(refreshTokens.tokenHash, hashRefreshToken(presented)))
      .get()
    if (!row) return { kind: 'unknown' as const }
    if (row.rotatedAt || row.revokedAt) {
      db.update(refreshTokens)
        .set({ revokedAt: now.toISOString() })
        .where(and(eq(refreshTokens.familyId, row.familyId), isNull(refreshTokens.revokedAt)))
        .run()
      return { kind: 'reused' as const }
    }
    if (new Date(row.expiresAt) <= now) return { kind: 'expired' as const }
    db.update(refreshTokens).set({ rotatedAt: now.toISOString() }).where(eq(refreshTokens.id, row.id)).run()
    return { kind: 'ok' as const, row }
  })()
  if (outcome.kind !== 'ok') throw unauthorized('Your session has ended; sign in again.')
  const user = findActiveUser(ctx.database, outcome.row.userId)
  if (!user) throw unauthorized('Your session has ended; sign in again.')
  const session = await issueSession(ctx, user, outcome.row.familyId, now)
  db.update(refreshTokens)
    .set({ replacedBy: hashRefreshToken(session.refreshToken) })
    .where(eq(refreshTokens.id, outcome.row.id))
    .run()
  return session
}

/** Ends the refresh-token family of the presented token; unknown tokens are ignored. */
export function signOut(ctx: AppContext, presented: string | undefined, now = new Date()): void {
  if (!presented) return
  const { db } = ctx.database
  const row = db
    .select()
    .from(refreshTokens)
    .where(eq(refreshTokens.tokenHash, hashRefreshToken(presented)))
    .get()
  if (!row) return
  db.update(refreshTokens)
    .set({ revokedAt: now.toISOString() })
    .where(and(eq(refreshTokens.familyId, row.familyId), isNull(refreshTokens.revokedAt)))
    .run()
}

/** Invalidates every access token of a user at once (role change, disable). */
export function bumpTokenVersion(ctx: AppContext, userId: string): void {
  const row = ctx.database.db.select({ v: users.tokenVersion }).from(users).where(eq(users.id, userId)).get()
  if (row)
    ctx.database.db
      .update(users)
      .set({ tokenVersion: row.v + 1 })
      .where(eq(users.id, userId))
      .run()
}

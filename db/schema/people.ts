import { sql } from 'drizzle-orm'
import { check, index, integer, sqliteTable, text, uniqueIndex } from 'drizzle-orm/sqlite-core'
import { roles } from '#shared/schemas/enums'
import { serverSeq } from './columns'

export const crews = sqliteTable(
  'crews',
  {
    id: text('id').primaryKey(),
    name: text('name').notNull(),
    serverSeq: serverSeq(),
  },
  (t) => [index('crews_server_seq').on(t.serverSeq)],
)

export const users = sqliteTable(
  'users',
  {
    id: text('id').primaryKey(),
    email: text('email').notNull(),
    name: text('name').notNull(),
    role: text('role', { enum: roles }).notNull(),
    crewId: text('crew_id').references(() => crews.id),
    passwordHash: text('password_hash').notNull(),
    active: integer('active', { mode: 'boolean' }).notNull().default(true),
    // Bumped to invalidate every access token already issued to the user.
    tokenVersion: integer('token_version').notNull().default(0),
    createdAt: text('created_at').notNull(),
    serverSeq: serverSeq(),
  },
  (t) => [
    uniqueIndex('users_email').on(t.email),
    index('users_crew').on(t.crewId),
    index('users_server_seq').on(t.serverSeq),
    // Sign-in looks the address up as typed, lowercased; a mixed-case row would never match.
    check('users_email_lowercase', sql`${t.email} = lower(${t.email})`),
  ],
)

export const refreshTokens = sqliteTable(
  'refresh_tokens',
  {
    id: text('id').primaryKey(),
    userId: text('user_id')
      .notNull()
      .references(() => users.id, { onDelete: 'cascade' }),
    // Every token rotated from one sign-in shares the family, so reuse of any of them revokes all.
    familyId: text('family_id').notNull(),
    tokenHash: text('token_hash').notNull(),
    createdAt: text('created_at').notNull(),
    expiresAt: text('expires_at').notNull(),
    rotatedAt: text('rotated_at'),
    revokedAt: text('revoked_at'),
    replacedBy: text('replaced_by'),
  },
  (t) => [
    uniqueIndex('refresh_tokens_hash').on(t.tokenHash),
    index('refresh_tokens_family').on(t.familyId),
    index('refresh_tokens_user').on(t.userId),
  ],
)

import { index, integer, sqliteTable, text, uniqueIndex } from 'drizzle-orm/sqlite-core'
import { users } from './people'

export const mailTokenPurposes = ['invitation', 'reset'] as const

/** Single-use secrets behind invitation and password-reset links, kept only as sha256. */
export const mailTokens = sqliteTable(
  'mail_tokens',
  {
    id: text('id').primaryKey(),
    userId: text('user_id')
      .notNull()
      .references(() => users.id, { onDelete: 'cascade' }),
    purpose: text('purpose', { enum: mailTokenPurposes }).notNull(),
    tokenHash: text('token_hash').notNull(),
    createdAt: text('created_at').notNull(),
    expiresAt: text('expires_at').notNull(),
    usedAt: text('used_at'),
  },
  (t) => [uniqueIndex('mail_tokens_hash').on(t.tokenHash), index('mail_tokens_user').on(t.userId)],
)

export const mailStates = ['sent', 'failed'] as const

/** Every message the server tried to send; `kind` + `key` is unique, so one event mails once. */
export const mailLog = sqliteTable(
  'mail_log',
  {
    id: integer('id').primaryKey({ autoIncrement: true }),
    kind: text('kind').notNull(),
    key: text('key').notNull(),
    recipients: text('recipients').notNull(),
    subject: text('subject').notNull(),
    state: text('state', { enum: mailStates }).notNull(),
    attempts: integer('attempts').notNull(),
    error: text('error'),
    createdAt: text('created_at').notNull(),
    sentAt: text('sent_at'),
  },
  (t) => [uniqueIndex('mail_log_kind_key').on(t.kind, t.key), index('mail_log_state').on(t.state)],
)

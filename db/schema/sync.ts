import { sql } from 'drizzle-orm'
import { check, index, integer, primaryKey, sqliteTable, text } from 'drizzle-orm/sqlite-core'
import { users } from './people'

// One row (id 1, seeded by migration 0001). Each write transaction increments it once and stamps the value
// on every row it changes; SQLite has one writer, so the values follow commit order and a pull cursor can
// never skip a change.
export const changeSeq = sqliteTable(
  'change_seq',
  {
    id: integer('id').primaryKey(),
    value: integer('value').notNull().default(0),
  },
  (t) => [check('change_seq_single_row', sql`${t.id} = 1`)],
)

export const syncClients = sqliteTable(
  'sync_clients',
  {
    clientId: text('client_id').primaryKey(),
    // Bound to the first user who pushes with the id; anyone else using it is refused.
    userId: text('user_id')
      .notNull()
      .references(() => users.id),
    lastSeq: integer('last_seq').notNull().default(0),
    createdAt: text('created_at').notNull(),
    lastSeenAt: text('last_seen_at').notNull(),
  },
  (t) => [index('sync_clients_user').on(t.userId)],
)

// The stored answer for every (clientId, seq) the server has answered, so a resent mutation gets the same
// answer and no second effect.
export const appliedMutations = sqliteTable(
  'applied_mutations',
  {
    clientId: text('client_id')
      .notNull()
      .references(() => syncClients.clientId),
    seq: integer('seq').notNull(),
    name: text('name').notNull(),
    result: text('result', { mode: 'json' }).$type<unknown>().notNull(),
    appliedAt: text('applied_at').notNull(),
  },
  (t) => [primaryKey({ columns: [t.clientId, t.seq] })],
)

// Payloads the server refused for good, kept so they can be shown, exported and re-applied.
export const rejectedMutations = sqliteTable(
  'rejected_mutations',
  {
    id: integer('id').primaryKey({ autoIncrement: true }),
    clientId: text('client_id')
      .notNull()
      .references(() => syncClients.clientId),
    seq: integer('seq').notNull(),
    userId: text('user_id')
      .notNull()
      .references(() => users.id),
    name: text('name').notNull(),
    args: text('args', { mode: 'json' }).$type<unknown>().notNull(),
    code: text('code').notNull(),
    message: text('message').notNull(),
    at: text('at').notNull(),
    resolvedAt: text('resolved_at'),
  },
  (t) => [
    index('rejected_mutations_client_seq').on(t.clientId, t.seq),
    index('rejected_mutations_open').on(t.resolvedAt, t.at),
  ],
)

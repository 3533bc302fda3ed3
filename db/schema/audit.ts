import { index, integer, sqliteTable, text } from 'drizzle-orm/sqlite-core'
import { users } from './people'
import { auditOutcomes } from './values'

// Append-only: rows are inserted, never updated or deleted.
export const auditLog = sqliteTable(
  'audit_log',
  {
    id: integer('id').primaryKey({ autoIncrement: true }),
    at: text('at').notNull(),
    // Null for changes the system makes on its own (imports, recomputes).
    userId: text('user_id').references(() => users.id),
    clientId: text('client_id'),
    entity: text('entity').notNull(),
    entityId: text('entity_id').notNull(),
    field: text('field'),
    oldValue: text('old_value', { mode: 'json' }).$type<unknown>(),
    newValue: text('new_value', { mode: 'json' }).$type<unknown>(),
    outcome: text('outcome', { enum: auditOutcomes }).notNull(),
    mutationSeq: integer('mutation_seq'),
  },
  // Read by record only (listAudit, the field stamps of a pull): one index. Users are never deleted, so
  // user_id needs none for its foreign key, and each index would be written again with every audit row.
  (t) => [index('audit_log_entity').on(t.entity, t.entityId, t.id)],
)

import { index, integer, sqliteTable, text, uniqueIndex } from 'drizzle-orm/sqlite-core'
import { closures } from './closures'

/**
 * The close-out PDF stored for each sign-off of a closure (server-only, never synced): one row per
 * closure and signed_off_at, so a sign-off after a reopen adds a row and the earlier one stays the record
 * of that earlier sign-off. The bytes live in the report store under storage_key, named by their sha256.
 */
export const closeOutReports = sqliteTable(
  'close_out_reports',
  {
    id: integer('id').primaryKey({ autoIncrement: true }),
    closureId: text('closure_id')
      .notNull()
      .references(() => closures.id),
    signedOffAt: text('signed_off_at').notNull(),
    sha256: text('sha256').notNull(),
    storageKey: text('storage_key').notNull(),
    size: integer('size').notNull(),
    createdAt: text('created_at').notNull(),
  },
  (t) => [
    uniqueIndex('close_out_reports_sign_off').on(t.closureId, t.signedOffAt),
    index('close_out_reports_sha256').on(t.sha256),
  ],
)

import { and, eq, sql } from 'drizzle-orm'
import type { Database } from '#db/client'
import { users } from '#db/schema/index'

export type UserRow = typeof users.$inferSelect

function activeUserQuery(db: Database['db']) {
  return db
    .select()
    .from(users)
    .where(and(eq(users.id, sql.placeholder('id')), eq(users.active, true)))
    .prepare()
}

// Prepared once per connection: every authenticated request (each push batch among them) reads its user.
const activeUserQueries = new WeakMap<Database['db'], ReturnType<typeof activeUserQuery>>()

/** The user with this id when the account is active; disabled accounts read as absent. */
export function findActiveUser(database: Database, id: string): UserRow | undefined {
  let query = activeUserQueries.get(database.db)
  if (!query) {
    query = activeUserQuery(database.db)
    activeUserQueries.set(database.db, query)
  }
  return query.get({ id })
}

/** The user with this e-mail address (compared lowercased), active or not. */
export function findUserByEmail(database: Database, email: string): UserRow | undefined {
  return database.db.select().from(users).where(eq(users.email, email.trim().toLowerCase())).get()
}

import { and, eq } from 'drizzle-orm'
import type { Database } from '#db/client'
import { users } from '#db/schema/index'

export type UserRow = typeof users.$inferSelect

/** The user with this id when the account is active; disabled accounts read as absent. */
export function findActiveUser(database: Database, id: string): UserRow | undefined {
  return database.db
    .select()
    .from(users)
    .where(and(eq(users.id, id), eq(users.active, true)))
    .get()
}

/** The user with this e-mail address (compared lowercased), active or not. */
export function findUserByEmail(database: Database, email: string): UserRow | undefined {
  return database.db.select().from(users).where(eq(users.email, email.trim().toLowerCase())).get()
}

import { eq, inArray, type SQL } from 'drizzle-orm'
import { closures } from '#db/schema/index'
import { forbidden, notFound } from '../errors'
import type { Actor } from '../middleware/auth'

type ClosureRow = typeof closures.$inferSelect

/**
 * Record scope on top of the policy table's role check: office sees every closure, splicer and
 * foreman their own crew's, the inspector only signed-off ones.
 */
export function canSeeClosure(actor: Actor, closure: Pick<ClosureRow, 'crewId' | 'state'>): boolean {
  switch (actor.role) {
    case 'office':
      return true
    case 'inspector':
      return closure.state === 'signed_off'
    case 'foreman':
    case 'splicer':
      return actor.crewId !== null && closure.crewId === actor.crewId
  }
}

/** The closure when the actor may see it; otherwise 404, the same answer as for a closure that does not exist. */
export function visibleClosure<T extends Pick<ClosureRow, 'crewId' | 'state'>>(
  actor: Actor,
  closure: T | undefined,
): T {
  if (!closure || !canSeeClosure(actor, closure)) throw notFound('The closure')
  return closure
}

/** A foreman acts on their own crew's closures only; office on all. Others never reach here (policy table). */
export function assertLeadsClosure(actor: Actor, closure: Pick<ClosureRow, 'crewId'>): void {
  if (actor.role === 'office') return
  if (actor.role === 'foreman' && actor.crewId !== null && closure.crewId === actor.crewId) return
  throw forbidden('Only the foreman of this crew or the office may do this.')
}

/** A SQL filter on closures that keeps the rows the actor may see (undefined: no narrowing). */
export function closureScope(actor: Actor): SQL | undefined {
  switch (actor.role) {
    case 'office':
      return undefined
    case 'inspector':
      return eq(closures.state, 'signed_off')
    case 'foreman':
    case 'splicer':
      // A user without a crew sees no closures: `IN ()` matches nothing.
      return inArray(closures.crewId, actor.crewId ? [actor.crewId] : [])
  }
}

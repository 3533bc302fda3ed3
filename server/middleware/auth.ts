import type { RequestHandler } from 'express'
import type { Role } from '#shared/schemas/enums'
import type { AppContext } from '../context'
import { forbidden, unauthorized } from '../errors'
import { findActiveUser } from '../repositories/users'
import { verifyAccessToken } from '../services/tokens'
import type { Rule } from '../policy'

/** The signed-in user as every service sees it, loaded from the database on each request. */
export interface Actor {
  id: string
  email: string
  name: string
  role: Role
  crewId: string | null
}

declare module 'express-serve-static-core' {
  interface Locals {
    actor: Actor
  }
}

/** Authenticates the bearer token and applies the route's role rule; role and crew come from the database. */
export function authorize(ctx: AppContext, rule: Rule): RequestHandler {
  return async (req, res, next) => {
    if (rule.roles === 'public') return next()
    const header = req.get('authorization') ?? ''
    const match = /^Bearer ([A-Za-z0-9_\-.]+)$/.exec(header)
    if (!match?.[1]) throw unauthorized()
    const claims = await verifyAccessToken(ctx.config, match[1])
    const user = findActiveUser(ctx.database, claims.userId)
    if (!user || user.tokenVersion !== claims.tokenVersion)
      throw unauthorized('Your session is no longer valid; sign in again.')
    res.locals.actor = {
      id: user.id,
      email: user.email,
      name: user.name,
      role: user.role,
      crewId: user.crewId,
    }
    if (!rule.roles.includes(user.role)) throw forbidden()
    next()
  }
}

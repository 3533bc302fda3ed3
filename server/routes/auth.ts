import { Router, type CookieOptions, type Request, type Response } from 'express'
import { rateLimit } from 'express-rate-limit'
import { signInSchema } from '#shared/schemas/user'
import type { AppContext } from '../context'
import { AppError } from '../errors'
import { parse, route } from '../http'
import { refresh, signIn, signOut, toSessionUser, type Session } from '../services/auth'
import { findActiveUser } from '../repositories/users'

const cookieName = 'ls_refresh'

function cookieOptions(req: Request, expires?: Date): CookieOptions {
  // Scoped to the auth routes so the refresh token never travels with ordinary API calls.
  return {
    httpOnly: true,
    sameSite: 'strict',
    secure: req.secure,
    path: '/api/auth',
    ...(expires ? { expires } : {}),
  }
}

function limited(message: string) {
  return (_req: Request, _res: unknown, _next: unknown, options: { statusCode: number }) => {
    throw new AppError('rate_limited', message, options.statusCode)
  }
}

export function authRouter(ctx: AppContext): Router {
  const router = Router()
  const { windowMs, perAccount, perAddress } = ctx.config.signInLimits
  const perAddressLimit = rateLimit({
    windowMs,
    limit: perAddress,
    standardHeaders: 'draft-8',
    legacyHeaders: false,
    handler: limited('Too many sign-in attempts from this address; wait and try again.'),
  })
  const perAccountLimit = rateLimit({
    windowMs,
    limit: perAccount,
    standardHeaders: 'draft-8',
    legacyHeaders: false,
    skipSuccessfulRequests: true,
    keyGenerator: (req) =>
      `account:${String((req.body as { email?: unknown })?.email ?? '')
        .trim()
        .toLowerCase()}`,
    handler: limited('Too many failed sign-ins for this account; wait and try again.'),
  })

  const send = (req: Request, res: Response, session: Session) => {
    res.cookie(cookieName, session.refreshToken, cookieOptions(req, session.refreshExpiresAt))
    res.set('Cache-Control', 'no-store')
    res.json({ accessToken: session.accessToken, expiresIn: session.expiresIn, user: session.user })
  }

  route(ctx, router, 'POST /api/auth/sign-in', perAddressLimit, perAccountLimit, async (req, res) => {
    const body = parse(signInSchema, req.body)
    send(req, res, await signIn(ctx, body.email, body.password))
  })

  route(ctx, router, 'POST /api/auth/refresh', async (req, res) => {
    send(req, res, await refresh(ctx, req.cookies?.[cookieName]))
  })

  route(ctx, router, 'POST /api/auth/sign-out', (req, res) => {
    signOut(ctx, req.cookies?.[cookieName])
    res.clearCookie(cookieName, cookieOptions(req))
    res.status(204).end()
  })

  route(ctx, router, 'GET /api/auth/me', (_req, res) => {
    const user = findActiveUser(ctx.database, res.locals.actor.id)
    res.json({ user: user ? toSessionUser(user) : null })
  })

  return router
}

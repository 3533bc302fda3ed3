import { Router } from 'express'
import type { AppContext } from '../context'
import { route } from '../http'

/** Liveness and readiness in one: the server answers and the database answers a query. */
export function healthRouter(ctx: AppContext): Router {
  const router = Router()
  route(ctx, router, 'GET /api/health', (_req, res) => {
    const row = ctx.database.sqlite.prepare('select 1 as ok').get() as { ok: number } | undefined
    res.json({ status: row?.ok === 1 ? 'ok' : 'degraded', version: ctx.version })
  })
  return router
}

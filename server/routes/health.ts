import { readFileSync } from 'node:fs'
import { Router } from 'express'
import type { AppContext } from '../context'
import { AppError } from '../errors'
import { route } from '../http'

const journal = JSON.parse(
  readFileSync(new URL('../../db/migrations/meta/_journal.json', import.meta.url), 'utf8'),
) as { entries: unknown[] }

/**
 * Liveness (`/api/health`: the process answers and the database answers a query) and readiness
 * (`/api/ready`: every migration applied, the photo store writable or reachable, not stopping) — a balancer
 * or supervisor sends work only to a ready server.
 */
export function healthRouter(ctx: AppContext): Router {
  const router = Router()
  route(ctx, router, 'GET /api/health', (_req, res) => {
    const row = ctx.database.sqlite.prepare('select 1 as ok').get() as { ok: number } | undefined
    res.json({ status: row?.ok === 1 ? 'ok' : 'degraded', version: ctx.version })
  })
  route(ctx, router, 'GET /api/ready', async (_req, res) => {
    const problems: string[] = []
    if (ctx.lifecycle.stopping) problems.push('the server is stopping')
    const applied = (
      ctx.database.sqlite.prepare('SELECT count(*) AS n FROM __drizzle_migrations').get() as { n: number }
    ).n
    if (applied < journal.entries.length)
      problems.push(`${journal.entries.length - applied} database migrations are not applied`)
    for (const [name, store] of [
      ['photo', ctx.storage.photos],
      ['report', ctx.storage.reports],
    ] as const) {
      try {
        await store.ready()
      } catch (error) {
        problems.push(`the ${name} store is not usable: ${(error as Error).name}`)
      }
    }
    if (problems.length > 0)
      throw new AppError('not_ready', `Not ready: ${problems.join('; ')}.`, 503, { problems })
    res.json({ status: 'ready', version: ctx.version, migrations: applied })
  })
  return router
}

import { Router } from 'express'
import type { AppContext } from '../context'
import { route } from '../http'
import * as reports from '../services/reports'
import * as splices from '../services/splices'

export function splicesRouter(ctx: AppContext): Router {
  const router = Router()
  route(ctx, router, 'GET /api/splices', (req, res) => {
    res.json(splices.listSplices(ctx, res.locals.actor, req.query))
  })
  route(ctx, router, 'GET /api/splices/:spliceId', (req, res) => {
    res.json(splices.getSplice(ctx, res.locals.actor, req.params.spliceId))
  })
  route(ctx, router, 'GET /api/projects/:projectId/board', (req, res) => {
    res.json(reports.board(ctx, res.locals.actor, req.params.projectId, req.query))
  })
  route(ctx, router, 'GET /api/projects/:projectId/production', (req, res) => {
    res.json(reports.production(ctx, res.locals.actor, req.params.projectId, req.query))
  })
  route(ctx, router, 'GET /api/audit', (req, res) => {
    res.json(reports.audit(ctx, res.locals.actor, req.query))
  })
  return router
}

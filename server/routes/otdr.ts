import { Router } from 'express'
import type { AppContext } from '../context'
import { route } from '../http'
import * as otdr from '../services/otdr'
import * as reconciliation from '../services/reconciliation'
import { fiberPath } from '../services/fiberPaths'
import { getLossBudget, putLossBudget } from '../services/lossBudget'
import { otdrCsvTemplate } from '../services/otdrCsv'
import { getProject } from '../services/projects'

export function otdrRouter(ctx: AppContext): Router {
  const router = Router()
  route(ctx, router, 'GET /api/projects/:projectId/otdr/template', (req, res) => {
    getProject(ctx, res.locals.actor, req.params.projectId)
    res.type('text/csv').attachment('otdr-events-template.csv').send(otdrCsvTemplate)
  })
  route(ctx, router, 'POST /api/projects/:projectId/otdr/imports', (req, res) => {
    const { status, result } = otdr.importOtdrFiles(ctx, res.locals.actor, req.params.projectId, req.body)
    res.status(status).json(result)
  })
  route(ctx, router, 'GET /api/closures/:closureId/reconciliation', (req, res) => {
    res.json(reconciliation.closureReconciliation(ctx, res.locals.actor, req.params.closureId))
  })
  route(ctx, router, 'GET /api/cables/:cableId/reconciliation', (req, res) => {
    res.json(reconciliation.cableReconciliation(ctx, res.locals.actor, req.params.cableId))
  })
  route(ctx, router, 'GET /api/projects/:projectId/fiber-path', (req, res) => {
    res.json(fiberPath(ctx, res.locals.actor, req.params.projectId, req.query))
  })
  route(ctx, router, 'GET /api/projects/:projectId/loss-budget', (req, res) => {
    res.json(getLossBudget(ctx, res.locals.actor, req.params.projectId))
  })
  route(ctx, router, 'PUT /api/projects/:projectId/loss-budget', (req, res) => {
    res.json(putLossBudget(ctx, res.locals.actor, req.params.projectId, req.body))
  })
  return router
}

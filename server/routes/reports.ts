import { type Response, Router } from 'express'
import type { AppContext } from '../context'
import { route } from '../http'
import { closeOutFile } from '../services/closeOut'
import { boardFile, closureSplicesFile, projectSplicesFile, type ExportFile } from '../services/exports'

/** Sends a built file as an attachment with its name. */
export function sendFile(res: Response, file: ExportFile): void {
  res
    .status(200)
    .set('Content-Type', file.contentType)
    .set('Content-Disposition', `attachment; filename="${file.filename}"`)
    .set('Cache-Control', 'no-store')
    .send(file.body)
}

/** Splice exports (CSV, XLSX), the board as XLSX and the close-out PDF. */
export function reportsRouter(ctx: AppContext): Router {
  const router = Router()
  route(ctx, router, 'GET /api/closures/:closureId/export/splices', async (req, res) => {
    sendFile(res, await closureSplicesFile(ctx, res.locals.actor, req.params.closureId, req.query))
  })
  route(ctx, router, 'GET /api/projects/:projectId/export/splices', async (req, res) => {
    sendFile(res, await projectSplicesFile(ctx, res.locals.actor, req.params.projectId, req.query))
  })
  route(ctx, router, 'GET /api/projects/:projectId/export/board', async (req, res) => {
    sendFile(res, await boardFile(ctx, res.locals.actor, req.params.projectId))
  })
  route(ctx, router, 'GET /api/closures/:closureId/close-out', async (req, res) => {
    sendFile(res, await closeOutFile(ctx, res.locals.actor, req.params.closureId))
  })
  return router
}

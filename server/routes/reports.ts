import { pipeline } from 'node:stream/promises'
import { type Response, Router } from 'express'
import type { AppContext } from '../context'
import { route } from '../http'
import { closeOutDownload } from '../services/closeOutArchive'
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
    const file = await closeOutDownload(ctx, res.locals.actor, req.params.closureId, req.query)
    if (file.stored === null) {
      sendFile(res, { filename: file.filename, contentType: 'application/pdf', body: file.body })
      return
    }
    // The stored copy of the current sign-off, streamed from the report store; a reopen changes what this
    // address answers, so it is not cached either.
    res
      .status(200)
      .set('Content-Type', 'application/pdf')
      .set('Content-Disposition', `attachment; filename="${file.filename}"`)
      .set('Content-Length', String(file.stored.size))
      .set('Cache-Control', 'no-store')
      .set('ETag', `"${file.stored.sha256}"`)
    // A reader that goes away mid-file is not a server error.
    await pipeline(file.body, res).catch((error: unknown) => {
      if (!res.destroyed) throw error
    })
  })
  return router
}

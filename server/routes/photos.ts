import { pipeline } from 'node:stream/promises'
import { Router, type Response } from 'express'
import type { AppContext } from '../context'
import { route, routeAccepting } from '../http'
import {
  type PhotoRow,
  assertPhotoHash,
  photoHead,
  photoMediaTypes,
  readPhoto,
  storePhoto,
} from '../services/photos'

// Bytes named by their hash never change: cacheable for a year, but only in the user's own browser.
function photoHeaders(res: Response, photo: PhotoRow): void {
  res.set({
    'Content-Type': photo.mime,
    'Content-Length': String(photo.size),
    'Cache-Control': 'private, max-age=31536000, immutable',
    'X-Content-Type-Options': 'nosniff',
    ETag: `"${photo.sha256}"`,
  })
}

/** Photo bytes by sha256: HEAD to ask, PUT to upload, GET to read. */
export function photosRouter(ctx: AppContext): Router {
  const router = Router()
  // Registered before GET: Express answers HEAD with the first matching GET route otherwise.
  route(ctx, router, 'HEAD /api/photos/:sha256', async (req, res) => {
    photoHeaders(res, await photoHead(ctx, res.locals.actor, req.params.sha256))
    res.status(200).end()
  })
  route(ctx, router, 'GET /api/photos/:sha256', async (req, res) => {
    const { photo, bytes } = await readPhoto(ctx, res.locals.actor, req.params.sha256)
    photoHeaders(res, photo)
    // A reader that goes away mid-photo is not a server error.
    await pipeline(bytes, res).catch((error: unknown) => {
      if (!res.destroyed) throw error
    })
  })
  routeAccepting(
    ctx,
    router,
    'PUT /api/photos/:sha256',
    [...photoMediaTypes],
    (req, _res, next) => {
      // Refused before a byte of the body is read.
      assertPhotoHash(req.params.sha256)
      next()
    },
    async (req, res) => {
      const length = req.get('content-length')
      const { created, photo } = await storePhoto(ctx, res.locals.actor, req.params.sha256, {
        body: req,
        mediaType: req.get('content-type') ?? '',
        length: length === undefined ? null : Number(length),
      })
      res.status(created ? 201 : 200).json(photo)
    },
  )
  return router
}

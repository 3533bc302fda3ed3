import type { RequestHandler, Router } from 'express'
import type { z } from 'zod'
import type { AppContext } from './context'
import { AppError } from './errors'
import { authorize } from './middleware/auth'
import { ruleFor, type RouteKey } from './policy'

const methods = {
  GET: 'get',
  POST: 'post',
  PUT: 'put',
  PATCH: 'patch',
  DELETE: 'delete',
  HEAD: 'head',
} as const

/**
 * Registers a handler under its policy key ('GET /api/closures/:closureId') on a router mounted at /api,
 * with authentication and the role check in front. Routes without a policy line cannot be registered.
 */
export function route(ctx: AppContext, router: Router, key: RouteKey, ...handlers: RequestHandler[]): void {
  routeAccepting(ctx, router, key, ['application/json'], ...handlers)
}

/** Like `route`, for handlers that read a body of another media type (CSV uploads, photo bytes). */
export function routeAccepting(
  ctx: AppContext,
  router: Router,
  key: RouteKey,
  mediaTypes: string[],
  ...handlers: RequestHandler[]
): void {
  const rule = ruleFor(key)
  const [method, path] = key.split(' ') as [keyof typeof methods, string]
  if (!rule || !methods[method] || !path?.startsWith('/api/'))
    throw new Error(`No policy line for route ${key}`)
  ctx.registeredRoutes.add(key)
  router[methods[method]](
    path.slice('/api'.length),
    authorize(ctx, rule),
    requireMediaType(mediaTypes),
    ...handlers,
  )
}

/** A request that carries a body must say it is one of the types the route reads (415 otherwise). */
function requireMediaType(mediaTypes: string[]): RequestHandler {
  return (req, _res, next) => {
    const hasBody = Number(req.get('content-length') ?? 0) > 0 || req.get('transfer-encoding') !== undefined
    if (hasBody && !req.is(mediaTypes)) {
      throw new AppError('unsupported_media_type', `Send the body as ${mediaTypes.join(' or ')}.`, 415)
    }
    next()
  }
}

/** Parses input with a shared schema; a ZodError becomes a 400 listing every bad field. */
export function parse<S extends z.ZodType>(schema: S, value: unknown): z.infer<S> {
  return schema.parse(value)
}

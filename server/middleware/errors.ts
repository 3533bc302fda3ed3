import type { ErrorRequestHandler, RequestHandler } from 'express'
import { ZodError } from 'zod'
import { AppError } from '../errors'

interface BodyParserError extends Error {
  type?: string
  status?: number
}

/** Maps every failure to `{ error: { code, message, details? } }`; unknown errors are 500 without internals. */
export const errorHandler: ErrorRequestHandler = (err: unknown, req, res, next) => {
  if (res.headersSent) return next(err)
  if (err instanceof AppError) {
    if (err.headers) res.set(err.headers)
    res.status(err.status).json({ error: { code: err.code, message: err.message, details: err.details } })
    return
  }
  if (err instanceof ZodError) {
    res.status(400).json({
      error: {
        code: 'invalid_input',
        message: 'Some fields are missing or not valid.',
        details: err.issues.map((issue) => ({
          path: issue.path.map(String).join('.'),
          message: issue.message,
        })),
      },
    })
    return
  }
  const bodyError = err as BodyParserError
  if (bodyError?.type === 'entity.parse.failed') {
    res
      .status(400)
      .json({ error: { code: 'malformed_json', message: 'The request body is not valid JSON.' } })
    return
  }
  if (bodyError?.type === 'entity.too.large') {
    res.status(413).json({ error: { code: 'too_large', message: 'The request body is too large.' } })
    return
  }
  // Express answers a malformed %-escape in the path with a URIError carrying status 400 and no type.
  if (
    (bodyError?.type || err instanceof URIError) &&
    typeof bodyError.status === 'number' &&
    bodyError.status >= 400 &&
    bodyError.status < 500
  ) {
    res
      .status(bodyError.status)
      .json({ error: { code: 'bad_request', message: 'The request could not be read.' } })
    return
  }
  // pino-http's request logger carries the request id; the stack stays in the log, never in the answer.
  if (req.log) req.log.error({ err }, 'request failed')
  else console.error(err)
  res.status(500).json({ error: { code: 'internal', message: 'Something went wrong on the server.' } })
}

/** Unknown /api routes answer in the error shape instead of falling through to the app shell. */
export const apiNotFound: RequestHandler = (req, res) => {
  res
    .status(404)
    .json({ error: { code: 'not_found', message: `No such API route: ${req.method} ${req.path}` } })
}

import { randomUUID } from 'node:crypto'
import type { IncomingMessage, ServerResponse } from 'node:http'
import { type DestinationStream, pino, type Logger } from 'pino'
import { pinoHttp } from 'pino-http'
import type { Config } from '../config'

// One JSON line per request with an id the answer carries back (X-Request-Id), so a crew's "it said error"
// can be found in the log. Nothing that signs anyone in is ever written: no Authorization or Cookie header,
// no Set-Cookie, no bodies, and query values under secret-sounding names are masked.

/** Query parameter names whose values are never logged. */
const secretParams = /token|password|secret|code|key|signature/i

/** The path and query of a URL with secret values replaced by `[redacted]`. */
export function loggableUrl(url: string | undefined): string {
  if (!url) return ''
  const at = url.indexOf('?')
  if (at < 0) return url
  const params = new URLSearchParams(url.slice(at + 1))
  for (const name of [...params.keys()]) if (secretParams.test(name)) params.set(name, '[redacted]')
  return `${url.slice(0, at)}?${params.toString()}`
}

// A caller's own id is kept when it looks like one (a proxy's, say); anything else gets a fresh UUID.
const idPattern = /^[A-Za-z0-9._:-]{8,100}$/

/** The process logger: JSON lines on stdout, at the configured level. */
export function createLogger(level: Config['logLevel'], destination?: DestinationStream): Logger {
  const options = { level, base: { app: 'lightseam' } }
  return destination ? pino(options, destination) : pino(options)
}

/** Request logging with request ids, for createApp. */
export function requestLogging(logger: Logger) {
  return pinoHttp({
    logger,
    genReqId(req: IncomingMessage, res: ServerResponse) {
      const given = req.headers['x-request-id']
      const id = typeof given === 'string' && idPattern.test(given) ? given : randomUUID()
      res.setHeader('X-Request-Id', id)
      return id
    },
    // Only what these name is written: a new field on req or res cannot leak by accident.
    serializers: {
      req: (req: { id: unknown; method: string; url: string; remoteAddress?: string }) => ({
        id: req.id,
        method: req.method,
        url: loggableUrl(req.url),
        remoteAddress: req.remoteAddress,
      }),
      res: (res: { statusCode: number }) => ({ statusCode: res.statusCode }),
    },
    customLogLevel(_req, res, error) {
      if (error || res.statusCode >= 500) return 'error'
      return res.statusCode >= 400 ? 'warn' : 'info'
    },
    // The health probe runs every few seconds; its lines would drown the day's work.
    autoLogging: { ignore: (req) => req.url === '/api/health' },
  })
}

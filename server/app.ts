import express, { type Express } from 'express'
import helmet from 'helmet'
import cookieParser from 'cookie-parser'
import type { AppContext, AppDeps } from './context'
import { apiNotFound, errorHandler } from './middleware/errors'
import { authRouter } from './routes/auth'
import { closuresRouter } from './routes/closures'
import { mailRouter } from './routes/mail'
import { peopleRouter } from './routes/people'
import { projectsRouter } from './routes/projects'
import { reportsRouter } from './routes/reports'
import { splicesRouter } from './routes/splices'
import { healthRouter } from './routes/health'
import { photosRouter } from './routes/photos'
import { syncRouter } from './routes/sync'
import { createStorage } from './storage/index'
import { createLogger, requestLogging } from './middleware/logging'
import { otdrRouter } from './routes/otdr'
import { createMailer } from './mail/mailer'
import { serveApp } from './static'

/** Builds the Express app around a context; never listens, so tests can drive it directly. */
export function createApp(deps: AppDeps): Express {
  const ctx: AppContext = {
    ...deps,
    storage: deps.storage ?? createStorage(deps.config),
    logger: deps.logger ?? createLogger(deps.config.logLevel),
    lifecycle: { stopping: false },
    mailer: deps.mailer ?? createMailer(deps.config.mail),
    registeredRoutes: new Set(),
  }
  const app = express()
  app.locals.ctx = ctx
  app.disable('x-powered-by')
  app.set('trust proxy', ctx.config.trustProxyHops)
  app.use(requestLogging(ctx.logger))
  app.use(
    helmet({
      contentSecurityPolicy: {
        useDefaults: false,
        directives: {
          defaultSrc: ["'self'"],
          scriptSrc: ["'self'"],
          // Quasar sets inline styles from script (CSSOM), which CSP counts as inline.
          styleSrc: ["'self'", "'unsafe-inline'"],
          imgSrc: ["'self'", 'data:', 'blob:'],
          fontSrc: ["'self'", 'data:'],
          connectSrc: ["'self'"],
          workerSrc: ["'self'"],
          manifestSrc: ["'self'"],
          objectSrc: ["'none'"],
          baseUri: ["'self'"],
          formAction: ["'self'"],
          frameAncestors: ["'none'"],
        },
      },
      // Crews reach a LAN server over plain http; HSTS and upgrades would lock them out.
      strictTransportSecurity: false,
    }),
  )

  const api = express.Router()
  api.use(express.json({ limit: '1mb', strict: true }))
  api.use(cookieParser())
  api.use(healthRouter(ctx))
  api.use(authRouter(ctx))
  api.use(projectsRouter(ctx))
  api.use(closuresRouter(ctx))
  api.use(splicesRouter(ctx))
  api.use(peopleRouter(ctx))
  api.use(syncRouter(ctx))
  api.use(photosRouter(ctx))
  api.use(otdrRouter(ctx))
  api.use(reportsRouter(ctx))
  api.use(mailRouter(ctx))
  api.use(apiNotFound)
  app.use('/api', api)

  serveApp(app, ctx.config.staticDir)
  app.use(errorHandler)
  return app
}

import { existsSync } from 'node:fs'
import { join } from 'node:path'
import express, { type Express } from 'express'

/** Serves the built PWA: hashed assets cached for a year, the worker and shell never cached, history fallback. */
export function serveApp(app: Express, staticDir: string): void {
  const indexFile = join(staticDir, 'index.html')
  if (!existsSync(indexFile)) return
  app.use(
    express.static(staticDir, {
      index: false,
      setHeaders(res, path) {
        if (/[\\/]assets[\\/]/.test(path))
          res.setHeader('Cache-Control', 'public, max-age=31536000, immutable')
        else res.setHeader('Cache-Control', 'no-cache')
      },
    }),
  )
  app.get('/{*splat}', (req, res, next) => {
    if (req.path.startsWith('/api/')) return next()
    res.setHeader('Cache-Control', 'no-cache')
    res.sendFile(indexFile)
  })
}

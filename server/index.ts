import { readFileSync } from 'node:fs'
import type { AddressInfo } from 'node:net'
import { fileURLToPath } from 'node:url'
import { openDatabase } from '#db/client'
import { runMigrations } from '#db/migrate'
import { demoUsers, seedDemo } from '#db/seed'
import { createApp } from './app'
import type { AppContext } from './context'
import { buildIfNeeded } from './build'
import { ConfigError, loadConfig } from './config'
import { startDailyReport } from './mail/schedule'

const root = fileURLToPath(new URL('..', import.meta.url))
const { version } = JSON.parse(readFileSync(new URL('../package.json', import.meta.url), 'utf8')) as {
  version: string
}

function main(): void {
  const config = loadConfig()
  if (process.argv.includes('--build-if-needed')) buildIfNeeded(root, config.staticDir)

  const database = openDatabase(config.dbFile)
  runMigrations(database.db)
  if (process.argv.includes('--seed-if-empty') && seedDemo(database.db, { bcryptCost: config.bcryptCost })) {
    console.warn('Seeded the demo scenario. Demo-only sign-ins (never use these for real work):')
    for (const user of demoUsers)
      console.warn(`  ${user.role.padEnd(9)} ${user.email}  password: ${user.password}`)
  }

  const app = createApp({ config, database, version })
  const ctx = app.locals.ctx as AppContext
  const daily = startDailyReport(ctx)
  if (!config.mail.smtpUrl)
    console.warn(`Mail goes to the local fake SMTP server; messages are kept in ${config.mail.dir}.`)
  const server = app.listen(config.port, config.host, () => {
    const { port } = server.address() as AddressInfo
    console.warn(`Lightseam is listening on http://${config.host}:${port}`)
  })

  let closing = false
  const shutdown = (signal: string) => {
    if (closing) return
    closing = true
    ctx.lifecycle.stopping = true
    console.warn(`${signal}: finishing open requests, then closing the database.`)
    daily.stop()
    server.close(() => {
      // Mail started by the last requests (a sign-off's close-out report and message) still reads and
      // writes the database: it finishes, or is logged as failed for the retry, before the database closes.
      void ctx.mailer
        .close()
        .catch((error: unknown) => console.error('mail at shutdown:', error))
        .finally(() => {
          database.sqlite.pragma('wal_checkpoint(TRUNCATE)')
          database.sqlite.close()
          process.exit(0)
        })
    })
    setTimeout(() => process.exit(1), 10_000).unref()
  }
  process.on('SIGTERM', () => shutdown('SIGTERM'))
  process.on('SIGINT', () => shutdown('SIGINT'))
}

try {
  main()
} catch (error) {
  if (error instanceof ConfigError) {
    console.error(error.message)
    process.exit(2)
  }
  throw error
}

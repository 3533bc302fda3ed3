import { mkdtempSync, rmSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import type { Express } from 'express'
import type { Logger } from 'pino'
import request from 'supertest'
import { openDatabase, type Database } from '#db/client'
import { runMigrations } from '#db/migrate'
import { demoUsers, seedDemo, type DemoUser } from '#db/seed'
import { createApp } from '../../../server/app'
import { loadConfig, type Config } from '../../../server/config'
import type { AppContext } from '../../../server/context'

export interface TestApp {
  app: Express
  ctx: AppContext
  database: Database
  config: Config
  /** A signed-in demo user's bearer header value. */
  tokenFor: (who: DemoWho) => Promise<string>
  /** Waits for the mail the requests started (sign-off messages run after the answer), then removes it all. */
  close: () => Promise<void>
}

/** The demo users by key: one per role in the first crew (and office, inspector), `…2` in the second crew. */
export type DemoWho = DemoUser['key']

const secret = new TextEncoder().encode('test-secret-test-secret-test-secret-0123456789')

/** A fresh app over its own SQLite file: migrations applied, demo scenario seeded, fast hashing. */
export function makeTestApp(
  overrides: Partial<Config> = {},
  options: { seed?: boolean; logger?: Logger } = {},
): TestApp {
  const dataDir = mkdtempSync(join(tmpdir(), 'lightseam-api-'))
  const config = loadConfig(
    {
      NODE_ENV: 'test',
      LIGHTSEAM_DATA_DIR: dataDir,
      LIGHTSEAM_BCRYPT_COST: '4',
      LIGHTSEAM_STATIC_DIR: join(dataDir, 'no-dist'),
    },
    { jwtSecret: secret, ...overrides },
  )
  const database = openDatabase(config.dbFile)
  runMigrations(database.db)
  if (options.seed !== false) seedDemo(database.db, { bcryptCost: 4 })
  const app = createApp({ config, database, version: 'test', logger: options.logger })
  const ctx = app.locals.ctx as AppContext
  const tokens = new Map<string, string>()
  return {
    app,
    ctx,
    database,
    config,
    async tokenFor(who) {
      const cached = tokens.get(who)
      if (cached) return cached
      const user = demoUser(who)
      const res = await request(app)
        .post('/api/auth/sign-in')
        .send({ email: user.email, password: user.password })
      if (res.status !== 200)
        throw new Error(`sign-in as ${who} failed: ${res.status} ${JSON.stringify(res.body)}`)
      const header = `Bearer ${res.body.accessToken as string}`
      tokens.set(who, header)
      return header
    },
    async close() {
      await ctx.mailer.close()
      database.sqlite.close()
      rmSync(dataDir, { recursive: true, force: true })
    },
  }
}

/** The demo account standing for `who`. */
export function demoUser(who: DemoWho) {
  const user = demoUsers.find((u) => u.key === who)
  if (!user) throw new Error(`no demo user ${who}`)
  return user
}

/** Row counts of every table, to prove a refused request wrote nothing. */
export function tableCounts(database: Database): Record<string, number> {
  const tables = database.sqlite
    .prepare(
      "SELECT name FROM sqlite_master WHERE type = 'table' AND name NOT LIKE 'sqlite_%' AND name NOT LIKE '__drizzle%'",
    )
    .all() as { name: string }[]
  return Object.fromEntries(
    tables.map(({ name }) => [
      name,
      (database.sqlite.prepare(`SELECT count(*) AS n FROM "${name}"`).get() as { n: number }).n,
    ]),
  )
}

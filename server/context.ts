import type { Logger } from 'pino'
import type { Database } from '#db/client'
import type { Config } from './config'
import type { Mailer } from './mail/mailer'
import type { Storage } from './storage/index'

/** What createApp needs from its caller: tests pass their own (fresh database file, fast hashing). */
export interface AppDeps {
  config: Config
  database: Database
  version: string
  /** Where photo and report bytes go; the store config.storage names when not given. */
  storage?: Storage
  /** Where request and error lines go; stdout at config.logLevel when not given. */
  logger?: Logger
  /** How mail goes out; SMTP from the config (or the local fake SMTP server) when not given. */
  mailer?: Mailer
}

/** What every route and service may use; built once by createApp. */
export interface AppContext extends AppDeps {
  storage: Storage
  logger: Logger
  /** Set when the server has begun to stop: readiness then answers 503 so a balancer stops sending work. */
  lifecycle: { stopping: boolean }
  mailer: Mailer
  /** Every route key registered by createApp, checked against the policy table by the permission test. */
  registeredRoutes: Set<string>
}

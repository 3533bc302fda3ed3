import type { Database } from '#db/client'
import type { Config } from './config'
import type { Mailer } from './mail/mailer'
import type { PhotoStorage } from './storage/index'

/** What createApp needs from its caller: tests pass their own (fresh database file, fast hashing). */
export interface AppDeps {
  config: Config
  database: Database
  version: string
  /** Where photo bytes go; the local disk under config.photoDir when not given. */
  storage?: PhotoStorage
  /** How mail goes out; SMTP from the config (or the local fake SMTP server) when not given. */
  mailer?: Mailer
}

/** What every route and service may use; built once by createApp. */
export interface AppContext extends AppDeps {
  storage: PhotoStorage
  mailer: Mailer
  /** Every route key registered by createApp, checked against the policy table by the permission test. */
  registeredRoutes: Set<string>
}

import type { Database } from '#db/client'
import type { Config } from './config'
import type { PhotoStorage } from './storage/index'

/** What createApp needs from its caller: tests pass their own (fresh database file, fast hashing). */
export interface AppDeps {
  config: Config
  database: Database
  version: string
  /** Where photo bytes go; the local disk under config.photoDir when not given. */
  storage?: PhotoStorage
}

/** What every route and service may use; built once by createApp. */
export interface AppContext extends AppDeps {
  storage: PhotoStorage
  /** Every route key registered by createApp, checked against the policy table by the permission test. */
  registeredRoutes: Set<string>
}

import type { Database } from '#db/client'
import type { Config } from './config'

/** What createApp needs from its caller: tests pass their own (fresh database file, fast hashing). */
export interface AppDeps {
  config: Config
  database: Database
  version: string
}

/** What every route and service may use; built once by createApp. */
export interface AppContext extends AppDeps {
  /** Every route key registered by createApp, checked against the policy table by the permission test. */
  registeredRoutes: Set<string>
}

import { type DeviceDb } from '@/idb/db'
import { createSyncEngine, type SyncEngineOptions, type SyncStatus } from '@/sync/engine'
import type { Timers } from '@/sync/transport'
import { ids } from '../shared/builders'
import { buildClosureRow, buildTrayRow, freshDb } from '../idb/support'
import { FakeServer } from './fakeServer'

/** Puts the test closure and its trays on the server, as the office set them up. */
export function seedServer(server: FakeServer, closure: Record<string, unknown> = {}): void {
  const { serverSeq: _s, deleted: _d, ...row } = { ...buildClosureRow(), ...closure }
  server.seed('closures', row)
  for (const tray of [buildTrayRow(), buildTrayRow({ id: ids.tray2, number: 2 })]) {
    const { serverSeq: _ts, deleted: _td, ...trayRow } = tray
    server.seed('trays', trayRow)
  }
}

export const requestTimeoutMs = 5_000

/** Timers that never fire and record retry delays only (request timeouts are left out). */
export function recordingTimers(): Timers & { delays: number[] } {
  const delays: number[] = []
  let handles = 0
  return {
    delays,
    setTimeout: (_callback, ms) => {
      if (ms !== requestTimeoutMs) delays.push(ms)
      return ++handles
    },
    clearTimeout: () => undefined,
  }
}

export interface Rig {
  server: FakeServer
  db: DeviceDb
  engine: ReturnType<typeof createSyncEngine>
  statuses: SyncStatus[]
  refreshes: () => number
  /** Every push body sent, as sent. */
  pushBodies: string[]
}

/** A device database, a fake server holding the test closure, and an engine between them. */
export async function rig(
  overrides: Partial<SyncEngineOptions> & { server?: FakeServer; db?: DeviceDb } = {},
): Promise<Rig> {
  const server = overrides.server ?? new FakeServer()
  if (!overrides.server) seedServer(server)
  const db = overrides.db ?? (await freshDb())
  let token = server.issueToken(ids.splicer)
  let refreshes = 0
  const statuses: SyncStatus[] = []
  const pushBodies: string[] = []
  const inner = overrides.fetch ?? server.fetch
  const engine = createSyncEngine({
    db,
    baseUrl: '',
    random: () => 0.5,
    getAccessToken: () => token,
    refreshAccessToken: async () => {
      refreshes += 1
      token = server.issueToken(ids.splicer)
      return token
    },
    locks: null,
    onStatus: (status) => statuses.push(status),
    requestTimeoutMs,
    onlineTarget: null,
    visibilityTarget: null,
    ...overrides,
    fetch: (url, init) => {
      if (url.endsWith('/api/sync/push')) pushBodies.push(String(init.body))
      return inner(url, init)
    },
  })
  return { server, db, engine, statuses, refreshes: () => refreshes, pushBodies }
}

/** The seqs of push bodies the fake server saw, one array per push. */
export function pushedSeqs(bodies: string[]): number[][] {
  return bodies.map((body) =>
    (JSON.parse(body) as { mutations: { seq: number }[] }).mutations.map((m) => m.seq),
  )
}

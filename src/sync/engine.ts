import { liveQuery } from 'dexie'
import { errorBodySchema } from '#shared/schemas/common'
import {
  maxMutationsPerPush,
  type Mutation,
  pullResponseSchema,
  pushBodySchema,
  pushResponseSchema,
  syncSchemaVersion,
} from '#shared/schemas/sync'
import { deviceMeta, type DeviceDb } from '@/idb/db'
import { applyPull, noteAttempt, settleResults, updateDeviceMeta } from '@/idb/replication'
import type { OutboxEntry } from '@/idb/schema'
import { backoffDelayMs } from './backoff'
import { defaultLocks, type LockManagerLike, withLock } from './lock'
import { uploadPhotos } from './photos'
import {
  createTransport,
  type FetchLike,
  globalTimers,
  type HttpAnswer,
  retryAfterMs,
  type Timers,
  TransportError,
} from './transport'

export type SyncState = 'idle' | 'syncing' | 'offline' | 'error' | 'needsSignIn'

/** What the UI shows about sync; plain data, wrapped in refs by the UI. */
export interface SyncStatus {
  state: SyncState
  /** Local edits the server has not answered for. */
  queued: number
  /** Edits the server refused, kept on the device. */
  rejected: number
  /** When push and pull last both succeeded (device clock, ISO). */
  lastSyncAt: string | null
  lastError: string | null
  /** Server clock minus device clock; over 5 minutes is shown. */
  clockOffsetMs: number | null
}

interface EventSource {
  addEventListener(type: string, listener: () => void): void
  removeEventListener(type: string, listener: () => void): void
}

export interface SyncEngineOptions {
  db: DeviceDb
  /** Origin of the API ('' in the browser: same origin). */
  baseUrl: string
  fetch: FetchLike
  now?: () => number
  /** Source of backoff jitter, in [0, 1). */
  random?: () => number
  getAccessToken: () => Promise<string | null> | string | null
  /** Resolves to a new token, or null when the session is over; rejects when the server is unreachable. */
  refreshAccessToken: () => Promise<string | null>
  /** Web Locks; null forces the in-page mutex. Defaults to navigator.locks when present. */
  locks?: LockManagerLike | null
  onStatus?: (status: SyncStatus) => void
  batchSize?: number
  requestTimeoutMs?: number
  timers?: Timers
  /** Fires 'online' (window by default). */
  onlineTarget?: EventSource | null
  /** Fires 'visibilitychange' (document by default). */
  visibilityTarget?: (EventSource & { visibilityState: string }) | null
  maxBodyBytes?: number
  pullLimit?: number
  /** Quiet time after a local write before pushing it. */
  writeDebounceMs?: number
  /** Pull interval while everything is synced. */
  pollIntervalMs?: number
}

export interface SyncRoundResult {
  /** skipped: another tab holds the sync lock; deferred: the server's Retry-After has not passed. */
  outcome: 'synced' | 'failed' | 'needsSignIn' | 'skipped' | 'deferred'
  /** Mutations the server answered for (applied, merged, duplicate or rejected). */
  pushed: number
  /** Changes pulled. */
  pulled: number
  /** Photos now known to be on the server. */
  photos: number
  error: string | null
}

export interface SyncEngine {
  /** Runs one sync round now (or joins the one running); never throws. */
  syncNow(): Promise<SyncRoundResult>
  /** Starts the triggers: now, online, visible again, local writes, retry and poll timers. */
  start(): void
  /** Stops every trigger; resolves once a running round has finished. */
  stop(): Promise<void>
  /** Tells the engine a local write happened (writes in any tab are also noticed through Dexie). */
  notifyWrite(): void
  /** A copy of the current status. */
  readonly status: SyncStatus
}

/** A round that ended without the whole job done, and how the UI should show it. */
class RoundError extends Error {
  override name = 'RoundError'
  constructor(
    readonly state: 'offline' | 'error' | 'needsSignIn',
    message: string,
    readonly retryAfterMs: number | null = null,
  ) {
    super(message)
  }
}

const oneMiB = 1024 * 1024
const encoder = new TextEncoder()

function toMutation(entry: OutboxEntry): Mutation {
  return {
    seq: entry.seq,
    name: entry.name,
    args: entry.args,
    baseServerSeq: entry.baseServerSeq,
    clientTime: entry.clientTime,
  }
}

function describeAnswer(what: string, answer: HttpAnswer): string {
  const parsed = errorBodySchema.safeParse(answer.body)
  const detail = parsed.success
    ? `${parsed.data.error.code}: ${parsed.data.error.message}`
    : `HTTP ${answer.status}`
  return `${what} refused (${detail})`
}

function browserGlobal<T>(name: 'window' | 'document'): T | null {
  return ((globalThis as Record<string, unknown>)[name] as T | undefined) ?? null
}

/** Creates the sync engine of one device database: push the outbox, pull changes, upload photos. */
export function createSyncEngine(options: SyncEngineOptions): SyncEngine {
  const { db } = options
  const now = options.now ?? Date.now
  const random = options.random ?? Math.random
  const timers = options.timers ?? globalTimers
  const locks = options.locks === undefined ? defaultLocks() : options.locks
  const batchSize = Math.max(1, Math.min(options.batchSize ?? maxMutationsPerPush, maxMutationsPerPush))
  const maxBodyBytes = options.maxBodyBytes ?? oneMiB
  const pullLimit = options.pullLimit ?? 500
  const writeDebounceMs = options.writeDebounceMs ?? 1000
  const pollIntervalMs = options.pollIntervalMs ?? 60_000
  const onlineTarget =
    options.onlineTarget === undefined ? browserGlobal<EventSource>('window') : options.onlineTarget
  const visibilityTarget =
    options.visibilityTarget === undefined
      ? browserGlobal<EventSource & { visibilityState: string }>('document')
      : options.visibilityTarget

  const status: SyncStatus = {
    state: 'idle',
    queued: 0,
    rejected: 0,
    lastSyncAt: null,
    lastError: null,
    clockOffsetMs: null,
  }
  const transport = createTransport({
    baseUrl: options.baseUrl,
    fetch: options.fetch,
    now,
    timers,
    requestTimeoutMs: options.requestTimeoutMs ?? 20_000,
    getAccessToken: options.getAccessToken,
    refreshAccessToken: options.refreshAccessToken,
    onClockOffset: (offsetMs) => {
      status.clockOffsetMs = offsetMs
    },
  })

  let started = false
  let failures = 0
  // Set only by the server (Retry-After): no trigger may reach it earlier.
  let notBefore = 0
  let timer: unknown = null
  let running: Promise<SyncRoundResult> | null = null
  let again = false
  let newestSeenSeq: number | null = null
  let subscription: { unsubscribe(): void } | null = null

  function emit(patch: Partial<SyncStatus> = {}): void {
    Object.assign(status, patch)
    options.onStatus?.({ ...status })
  }

  function schedule(delayMs: number): void {
    if (!started) return
    if (timer !== null) timers.clearTimeout(timer)
    timer = timers.setTimeout(
      () => {
        timer = null
        void syncNow()
      },
      Math.max(delayMs, notBefore - now(), 0),
    )
  }

  async function refreshCounts(): Promise<void> {
    status.queued = await db.outbox.count()
    status.rejected = await db.rejected.count()
  }

  async function nextBatch(): Promise<OutboxEntry[]> {
    const entries = await db.outbox.orderBy('seq').limit(batchSize).toArray()
    const batch: OutboxEntry[] = []
    let bytes = 200 // the envelope around the mutations
    for (const entry of entries) {
      const size = encoder.encode(JSON.stringify(toMutation(entry))).byteLength + 1
      if (batch.length > 0 && bytes + size > maxBodyBytes) break
      batch.push(entry)
      bytes += size
    }
    return batch
  }

  function httpFailure(what: string, answer: HttpAnswer): RoundError {
    const wait = retryAfterMs(answer.headers, now())
    if (answer.status >= 500 || answer.status === 429) {
      return new RoundError('error', `${what}: the server is busy (HTTP ${answer.status}).`, wait)
    }
    return new RoundError('error', describeAnswer(what, answer))
  }

  /** Pushes the outbox in seq order; returns a message when the server refused a batch as a whole. */
  async function push(clientId: string, tally: SyncRoundResult): Promise<string | null> {
    let gapResends = 0
    for (;;) {
      const batch = await nextBatch()
      if (batch.length === 0) return null
      const mutations = batch.map(toMutation)
      const seqs = mutations.map((mutation) => mutation.seq)
      const body = { clientId, schemaVersion: syncSchemaVersion, mutations }
      // The server would answer 400; checking here names the entry and spares the round trip.
      const checked = pushBodySchema.safeParse(body)
      if (!checked.success) {
        const issue = checked.error.issues[0]
        const message = `Push not sent: ${issue?.path.join('.')} ${issue?.message}`
        await noteAttempt(db, seqs, message, { reachedServer: false })
        return message
      }
      let answer: HttpAnswer
      try {
        answer = await transport.request({ method: 'POST', path: '/api/sync/push', json: body })
      } catch (error) {
        // Unknown outcome: the server may have applied the batch. The same seqs go again later, never
        // renumbered, and its per-client last_seq turns the repeat into duplicates.
        if (error instanceof TransportError && error.kind !== 'signIn') {
          await noteAttempt(db, seqs, error.message, { reachedServer: true })
        }
        throw error
      }
      if (answer.status !== 200) {
        const failure = httpFailure('Push', answer)
        // A 5xx rolled the whole batch back; a 4xx (400 malformed, 403 clientId of another user) applied
        // nothing. Either way nothing is deleted.
        await noteAttempt(db, seqs, failure.message, { reachedServer: false })
        if (answer.status >= 500 || answer.status === 429) throw failure
        return failure.message
      }
      const parsed = pushResponseSchema.safeParse(answer.body)
      if (!parsed.success) {
        await noteAttempt(db, seqs, 'Unreadable push answer.', { reachedServer: true })
        throw new RoundError('error', 'The server’s push answer was not understood.')
      }
      const outcome = await settleResults(db, mutations, parsed.data.results, { now })
      const answered = outcome.settled.length + outcome.rejected.length
      tally.pushed += answered
      if (outcome.unanswered.length > 0) {
        const why =
          outcome.expectedSeq === null
            ? 'No answer for this seq.'
            : `Gap: server expects ${outcome.expectedSeq}.`
        await noteAttempt(db, outcome.unanswered, why, { reachedServer: true })
      }
      if (outcome.expectedSeq !== null) {
        // The next batch starts at the lowest queued seq, which is the one the server expects unless the
        // device no longer has it (then resending cannot help: it needs a person).
        const lowest = (await db.outbox.orderBy('seq').first())?.seq
        if (lowest === undefined || lowest > outcome.expectedSeq || ++gapResends > 3) {
          throw new RoundError(
            'error',
            `The server expects seq ${outcome.expectedSeq}; the queue here starts at ${lowest ?? 'none'}.`,
          )
        }
        continue
      }
      if (answered === 0)
        throw new RoundError('error', 'The server answered for none of the pushed mutations.')
    }
  }

  async function pull(clientId: string, tally: SyncRoundResult): Promise<void> {
    let cursor = (await deviceMeta(db)).cursor
    for (;;) {
      const query = `cursor=${cursor}&limit=${pullLimit}&clientId=${encodeURIComponent(clientId)}`
      const answer = await transport.request({ method: 'GET', path: `/api/sync/pull?${query}` })
      if (answer.status !== 200) throw httpFailure('Pull', answer)
      const parsed = pullResponseSchema.safeParse(answer.body)
      if (!parsed.success) throw new RoundError('error', 'The server’s pull answer was not understood.')
      const applied = await applyPull(db, parsed.data, { now })
      tally.pulled += parsed.data.changes.length
      if (!parsed.data.hasMore) return
      if (applied.cursor <= cursor) throw new RoundError('error', 'Pull made no progress.')
      cursor = applied.cursor
    }
  }

  async function round(clientId: string): Promise<SyncRoundResult> {
    const tally: SyncRoundResult = { outcome: 'synced', pushed: 0, pulled: 0, photos: 0, error: null }
    emit({ state: 'syncing' })
    try {
      const pushError = await push(clientId, tally)
      await pull(clientId, tally)
      const lastSyncAt = pushError ? status.lastSyncAt : new Date(now()).toISOString()
      // Photos after text: a photo that cannot go never holds back the records.
      const photos = await uploadPhotos(db, transport)
      tally.photos = photos.uploaded
      const error = pushError ?? photos.temporaryError
      failures = error ? failures + 1 : 0
      await updateDeviceMeta(db, { lastError: error, clockOffsetMs: status.clockOffsetMs })
      await refreshCounts()
      emit({ state: error ? 'error' : 'idle', lastSyncAt, lastError: error })
      schedule(error ? backoffDelayMs(failures - 1, random) : pollIntervalMs)
      return { ...tally, outcome: error ? 'failed' : 'synced', error }
    } catch (thrown) {
      const failure =
        thrown instanceof RoundError
          ? thrown
          : thrown instanceof TransportError
            ? new RoundError(thrown.kind === 'signIn' ? 'needsSignIn' : 'offline', thrown.message)
            : new RoundError('error', (thrown as Error).message ?? String(thrown))
      failures += 1
      if (failure.retryAfterMs !== null) notBefore = now() + failure.retryAfterMs
      await updateDeviceMeta(db, { lastError: failure.message, clockOffsetMs: status.clockOffsetMs }).catch(
        () => undefined,
      )
      await refreshCounts().catch(() => undefined)
      emit({ state: failure.state, lastError: failure.message })
      if (failure.state === 'needsSignIn') {
        // The outbox stays as it is; start() again after sign-in picks it up.
        halt()
        return { ...tally, outcome: 'needsSignIn', error: failure.message }
      }
      schedule(Math.max(backoffDelayMs(failures - 1, random), failure.retryAfterMs ?? 0))
      return { ...tally, outcome: 'failed', error: failure.message }
    }
  }

  async function lockedRound(): Promise<SyncRoundResult> {
    const idle = { pushed: 0, pulled: 0, photos: 0 }
    if (now() < notBefore) {
      schedule(notBefore - now())
      return { ...idle, outcome: 'deferred', error: status.lastError }
    }
    const meta = await deviceMeta(db)
    status.lastSyncAt ??= meta.lastPullAt
    status.clockOffsetMs ??= meta.clockOffsetMs
    const { clientId } = meta
    // One syncing tab per device database; other tabs keep writing and the holder sees their writes.
    const result = await withLock(`lightseam-sync-${clientId}`, locks, () => round(clientId))
    if (result.acquired) return result.value
    schedule(pollIntervalMs)
    return { ...idle, outcome: 'skipped', error: null }
  }

  function syncNow(): Promise<SyncRoundResult> {
    if (running) {
      again = true
      return running
    }
    running = (async () => {
      try {
        let result: SyncRoundResult
        do {
          again = false
          result = await lockedRound()
        } while (again && result.outcome === 'synced')
        return result
      } catch (error) {
        // Only the database itself can fail here (e.g. closed); report, never throw at a trigger.
        const message = (error as Error).message ?? String(error)
        emit({ state: 'error', lastError: message })
        return { outcome: 'failed', pushed: 0, pulled: 0, photos: 0, error: message }
      } finally {
        running = null
      }
    })()
    return running
  }

  function notifyWrite(): void {
    if (running) {
      again = true
      return
    }
    // While failing, the backoff timer decides; a write must not turn into a request per keystroke.
    if (failures === 0) schedule(writeDebounceMs)
  }

  const onOnline = (): void => {
    failures = 0
    void syncNow()
  }
  const onVisibility = (): void => {
    if (visibilityTarget?.visibilityState === 'visible') void syncNow()
  }

  function halt(): void {
    started = false
    if (timer !== null) timers.clearTimeout(timer)
    timer = null
    onlineTarget?.removeEventListener('online', onOnline)
    visibilityTarget?.removeEventListener('visibilitychange', onVisibility)
    subscription?.unsubscribe()
    subscription = null
  }

  function start(): void {
    if (started) return
    started = true
    failures = 0
    onlineTarget?.addEventListener('online', onOnline)
    visibilityTarget?.addEventListener('visibilitychange', onVisibility)
    newestSeenSeq = null
    // liveQuery also reports writes from other tabs, so the tab holding the lock pushes them.
    subscription = liveQuery(async () => ({
      queued: await db.outbox.count(),
      rejected: await db.rejected.count(),
      newestSeq: ((await db.outbox.toCollection().lastKey()) as number | undefined) ?? 0,
    })).subscribe({
      next: ({ queued, rejected, newestSeq }) => {
        const wrote = newestSeenSeq !== null && newestSeq > newestSeenSeq
        newestSeenSeq = Math.max(newestSeenSeq ?? 0, newestSeq)
        emit({ queued, rejected })
        if (wrote) notifyWrite()
      },
      error: (error: unknown) => console.error('sync: outbox watch failed', error),
    })
    void syncNow()
  }

  return {
    syncNow,
    start,
    async stop() {
      halt()
      await running
    },
    notifyWrite,
    get status() {
      return { ...status }
    },
  }
}

// An in-memory stand-in for the sync API (SYNC.md), simple on purpose: per-client last_seq dedupe with stored
// results, gap detection, per-mutation results, a change sequence with cursor pull, photos by hash, bearer
// tokens, and injectable network faults. The real server is tested against the same client separately.
import {
  type Change,
  type Mutation,
  mutationArgsSchemas,
  type MutationResult,
  pullQuerySchema,
  pushBodySchema,
  syncedTables,
  type SyncedTable,
} from '#shared/schemas/sync'
import { hashBytes } from '@/sync/hash'

type Row = Record<string, unknown> & { id: string; serverSeq: number; deleted: boolean }

export interface FakeRequest {
  method: string
  path: string
  url: URL
  headers: Record<string, string>
  body: RequestInit['body']
}

/** What the network does to one request. */
export type NetworkAction =
  | 'drop-request' // lost before the server saw it
  | 'drop-response' // the server processed it, the answer was lost
  | 'hang' // never answers (until aborted)
  | 'hang-ignoring-abort' // never answers, not even when aborted
  | 'duplicate' // delivered twice; the client sees the second answer
  | { status: number; headers?: Record<string, string>; body?: unknown }

interface OneShot {
  match: (request: FakeRequest) => boolean
  action: NetworkAction
}

interface ClientState {
  userId: string
  lastSeq: number
  results: Map<number, MutationResult>
}

export class FakeServer {
  readonly tables = new Map<SyncedTable, Map<string, Row>>(syncedTables.map((table) => [table, new Map()]))
  changeSeq = 0
  readonly clients = new Map<string, ClientState>()
  /** Every (clientId, seq) the server took an answer for, in order: a repeat here is a double effect. */
  readonly accounted: { clientId: string; seq: number; name: string; status: MutationResult['status'] }[] = []
  readonly photos = new Map<string, { bytes: Uint8Array; type: string }>()
  readonly requests: { method: string; path: string; status: number | 'dropped' }[] = []
  /** Consulted for every request that no one-shot fault matched. */
  network: ((request: FakeRequest) => NetworkAction | undefined) | null = null
  /** Awaited inside each push while it is counted as in flight. */
  pushGate: (() => Promise<void>) | null = null
  inFlightPushes = 0
  maxConcurrentPushes = 0
  private readonly tokens = new Map<string, string>()
  private readonly oneShots: OneShot[] = []
  private tokenCount = 0

  constructor(readonly now: () => number = Date.now) {}

  /** A valid bearer token for `userId`. */
  issueToken(userId: string): string {
    const token = `token-${++this.tokenCount}`
    this.tokens.set(token, userId)
    return token
  }

  /** Ends every session: all tokens answer 401. */
  revokeTokens(): void {
    this.tokens.clear()
  }

  /** Applies `action` to the next request that `match` accepts (any request by default). */
  failNext(action: NetworkAction, match: (request: FakeRequest) => boolean = () => true): void {
    this.oneShots.push({ match, action })
  }

  /** Stores a row as if written by another user, with a new change sequence value. */
  seed(table: SyncedTable, row: Record<string, unknown> & { id: string }): number {
    const serverSeq = ++this.changeSeq
    this.rows(table).set(row.id, { ...row, serverSeq, deleted: false })
    return serverSeq
  }

  rows(table: SyncedTable): Map<string, Row> {
    return this.tables.get(table)!
  }

  readonly fetch = async (url: string, init: RequestInit = {}): Promise<Response> => {
    const parsed = new URL(url, 'http://lightseam.test')
    const request: FakeRequest = {
      method: init.method ?? 'GET',
      path: parsed.pathname,
      url: parsed,
      headers: Object.fromEntries(Object.entries((init.headers ?? {}) as Record<string, string>)),
      body: init.body,
    }
    const shot = this.oneShots.findIndex((candidate) => candidate.match(request))
    const action = shot >= 0 ? this.oneShots.splice(shot, 1)[0]!.action : this.network?.(request)
    const signal = init.signal
    const abortError = () => Object.assign(new Error('The operation was aborted.'), { name: 'AbortError' })
    const dropped = () => {
      this.requests.push({ method: request.method, path: request.path, status: 'dropped' })
      return new TypeError('fetch failed')
    }
    if (action === 'drop-request') throw dropped()
    if (action === 'hang' || action === 'hang-ignoring-abort') {
      this.requests.push({ method: request.method, path: request.path, status: 'dropped' })
      return new Promise<Response>((_, reject) => {
        if (action === 'hang') signal?.addEventListener('abort', () => reject(abortError()))
      })
    }
    if (action !== undefined && typeof action === 'object') {
      this.requests.push({ method: request.method, path: request.path, status: action.status })
      return json(action.status, action.body ?? { error: { code: 'fault', message: 'injected' } }, {
        date: new Date(this.now()).toUTCString(),
        ...action.headers,
      })
    }
    if (action === 'duplicate') await this.handle(request)
    const response = await this.handle(request)
    if (action === 'drop-response') throw dropped()
    this.requests.push({ method: request.method, path: request.path, status: response.status })
    return response
  }

  private async handle(request: FakeRequest): Promise<Response> {
    const headers = { date: new Date(this.now()).toUTCString() }
    const auth = /^Bearer (.+)$/.exec(request.headers.Authorization ?? '')
    const userId = auth ? this.tokens.get(auth[1]!) : undefined
    if (!userId) return json(401, { error: { code: 'unauthenticated', message: 'Sign in.' } }, headers)

    if (request.method === 'POST' && request.path === '/api/sync/push') {
      let body: unknown
      try {
        body = JSON.parse(String(request.body))
      } catch {
        return json(400, { error: { code: 'bad_json', message: 'Malformed JSON.' } }, headers)
      }
      const parsed = pushBodySchema.safeParse(body)
      if (!parsed.success)
        return json(400, { error: { code: 'invalid', message: parsed.error.message } }, headers)
      this.inFlightPushes += 1
      this.maxConcurrentPushes = Math.max(this.maxConcurrentPushes, this.inFlightPushes)
      try {
        if (this.pushGate) await this.pushGate()
        return this.push(userId, parsed.data.clientId, parsed.data.mutations, headers)
      } finally {
        this.inFlightPushes -= 1
      }
    }
    if (request.method === 'GET' && request.path === '/api/sync/pull') {
      const query = pullQuerySchema.safeParse(Object.fromEntries(request.url.searchParams))
      if (!query.success)
        return json(400, { error: { code: 'invalid', message: query.error.message } }, headers)
      return json(200, this.pull(query.data.cursor, query.data.limit, query.data.clientId), headers)
    }
    const photo = /^\/api\/photos\/([0-9a-f]{64})$/.exec(request.path)
    if (photo) {
      const sha256 = photo[1]!
      if (request.method === 'HEAD')
        return new Response(null, { status: this.photos.has(sha256) ? 200 : 404, headers })
      if (request.method === 'PUT') {
        const bytes = new Uint8Array(request.body as ArrayBuffer)
        if ((await hashBytes(bytes)) !== sha256) {
          return json(
            422,
            { error: { code: 'hash_mismatch', message: 'Bytes do not match the hash.' } },
            headers,
          )
        }
        const existed = this.photos.has(sha256)
        this.photos.set(sha256, { bytes, type: request.headers['Content-Type'] ?? '' })
        return new Response(null, { status: existed ? 200 : 201, headers })
      }
    }
    return json(404, { error: { code: 'not_found', message: request.path } }, headers)
  }

  private push(userId: string, clientId: string, mutations: Mutation[], headers: Record<string, string>) {
    let client = this.clients.get(clientId)
    if (!client) {
      client = { userId, lastSeq: 0, results: new Map() }
      this.clients.set(clientId, client)
    }
    if (client.userId !== userId) {
      return json(
        403,
        { error: { code: 'client_bound', message: 'This clientId belongs to another user.' } },
        headers,
      )
    }
    const results: MutationResult[] = []
    for (const mutation of mutations) {
      if (mutation.seq <= client.lastSeq) {
        // The stored answer: a rejection stays one, so a lost first answer never turns into success.
        const stored = client.results.get(mutation.seq)!
        results.push(stored.status === 'rejected' ? stored : { ...stored, status: 'duplicate' })
        continue
      }
      if (mutation.seq > client.lastSeq + 1) {
        results.push({ seq: mutation.seq, status: 'gap', expectedSeq: client.lastSeq + 1 })
        break
      }
      const result = { seq: mutation.seq, ...this.apply(userId, mutation) }
      client.lastSeq = mutation.seq
      client.results.set(mutation.seq, result)
      this.accounted.push({ clientId, seq: mutation.seq, name: mutation.name, status: result.status })
      results.push(result)
    }
    return json(200, { results, lastSeq: client.lastSeq }, headers)
  }

  private apply(userId: string, mutation: Mutation): Omit<MutationResult, 'seq'> {
    const schema = mutationArgsSchemas[mutation.name]
    const parsed = schema.safeParse(mutation.args)
    if (!parsed.success) return { status: 'rejected', code: 'invalid', message: parsed.error.message }
    const args = parsed.data as Record<string, unknown> & { id: string; closureId?: string }
    const stamp = this.changeSeq + 1
    const writes: [SyncedTable, Record<string, unknown> & { id: string; deleted?: unknown }][] = []
    const at = new Date(this.now()).toISOString()
    const splices = this.rows('splices')
    const closures = this.rows('closures')
    const rejected = (code: string, message: string) => ({ status: 'rejected' as const, code, message })
    const lockedClosure = (closureId: unknown) => closures.get(String(closureId))?.state === 'signed_off'

    switch (mutation.name) {
      case 'createSplice':
      case 'resplice': {
        if (!closures.has(String(args.closureId))) return rejected('not_found', 'No such closure.')
        if (lockedClosure(args.closureId)) return rejected('closure_locked', 'The closure is signed off.')
        if (splices.has(args.id)) return rejected('conflict', 'A splice with this id exists.')
        const supersedesId = args.supersedesId as string | null
        if (supersedesId !== null) {
          const old = splices.get(supersedesId)
          if (!old) return rejected('not_found', 'The superseded splice does not exist.')
          writes.push(['splices', { ...old, isCurrent: false }])
        }
        const row = { ...args, isCurrent: true, flags: [], reviewState: null, createdAt: at }
        writes.push(['splices', row])
        break
      }
      case 'updateSplice':
      case 'deleteSplice': {
        const row = splices.get(args.id)
        if (!row || row.deleted) return rejected('not_found', 'No such splice.')
        if (lockedClosure(row.closureId)) return rejected('closure_locked', 'The closure is signed off.')
        if (mutation.name === 'updateSplice') {
          writes.push(['splices', { ...row, ...(args.fields as object) }])
        } else {
          writes.push(['splices', { ...row, deleted: true }])
          const previous = row.supersedesId ? splices.get(row.supersedesId as string) : undefined
          if (row.isCurrent && previous) writes.push(['splices', { ...previous, isCurrent: true }])
        }
        break
      }
      case 'addPhotoLink':
        writes.push(['photoLinks', { ...args, addedBy: userId, createdAt: at }])
        break
      case 'removePhotoLink': {
        const link = this.rows('photoLinks').get(args.id)
        if (!link) return rejected('not_found', 'No such photo link.')
        writes.push(['photoLinks', { ...link, deleted: true }])
        break
      }
      case 'addNote':
        writes.push(['notes', { ...args, authorId: userId, createdAt: at }])
        break
      case 'setClosurePosition':
      case 'signOffClosure':
      case 'reopenClosure': {
        const closure = closures.get(String(args.closureId))
        if (!closure) return rejected('not_found', 'No such closure.')
        const { closureId: _id, note: _note, reason: _reason, ...position } = args as Record<string, unknown>
        const patch =
          mutation.name === 'setClosurePosition'
            ? position
            : mutation.name === 'signOffClosure'
              ? { state: 'signed_off', signedOffBy: userId, signedOffAt: at }
              : { state: 'reopened' }
        writes.push(['closures', { ...closure, ...patch }])
        break
      }
    }
    this.changeSeq = stamp
    for (const [table, row] of writes) {
      this.rows(table).set(row.id, { ...row, serverSeq: stamp, deleted: row.deleted === true })
    }
    return { status: 'applied' }
  }

  private pull(cursor: number, limit: number, clientId: string | undefined) {
    const all: Change[] = []
    for (const [table, rows] of this.tables) {
      for (const row of rows.values()) {
        if (row.serverSeq > cursor) {
          all.push({ table, id: row.id, serverSeq: row.serverSeq, deleted: row.deleted, row: { ...row } })
        }
      }
    }
    all.sort((a, b) => a.serverSeq - b.serverSeq)
    let end = Math.min(limit, all.length)
    // One change sequence value is one transaction: a page never splits it, or the cursor would skip rows.
    while (end < all.length && all[end]!.serverSeq === all[end - 1]!.serverSeq) end += 1
    const changes = all.slice(0, end)
    const hasMore = end < all.length
    return {
      changes,
      cursor: hasMore ? changes[changes.length - 1]!.serverSeq : Math.max(cursor, this.changeSeq),
      hasMore,
      lastMutationSeq: (clientId && this.clients.get(clientId)?.lastSeq) || 0,
    }
  }
}

function json(status: number, body: unknown, headers: Record<string, string>): Response {
  return new Response(JSON.stringify(body), {
    status,
    headers: { 'content-type': 'application/json', ...headers },
  })
}

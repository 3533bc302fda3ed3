/** The fetch the engine is given (the browser's, or a test's fake server). */
export type FetchLike = (url: string, init: RequestInit) => Promise<Response>

export interface Timers {
  setTimeout(callback: () => void, ms: number): unknown
  clearTimeout(handle: unknown): void
}

/** The global timers, for production. */
export const globalTimers: Timers = {
  setTimeout: (callback, ms) => globalThis.setTimeout(callback, ms),
  clearTimeout: (handle) => globalThis.clearTimeout(handle as ReturnType<typeof globalThis.setTimeout>),
}

/** Why a request has no usable answer. */
export type TransportFailure = 'network' | 'timeout' | 'signIn'

/** A request without an HTTP answer ('network', 'timeout': outcome unknown) or with no valid sign-in. */
export class TransportError extends Error {
  override name = 'TransportError'
  constructor(
    readonly kind: TransportFailure,
    message: string,
  ) {
    super(message)
  }
}

export interface HttpAnswer {
  status: number
  headers: Headers
  /** Parsed JSON when the answer carries JSON, else null. */
  body: unknown
}

export interface TransportOptions {
  baseUrl: string
  fetch: FetchLike
  now: () => number
  timers: Timers
  requestTimeoutMs: number
  /** The current access token, or null when there is none (the request then goes without one). */
  getAccessToken: () => Promise<string | null> | string | null
  /** Resolves to a new token, or null when the server refused (sign in again); rejects when unreachable. */
  refreshAccessToken: () => Promise<string | null>
  /** Called with server clock minus device clock whenever an answer carries a Date header. */
  onClockOffset?: (offsetMs: number) => void
}

export interface RequestSpec {
  method: 'GET' | 'POST' | 'PUT' | 'PATCH' | 'DELETE' | 'HEAD'
  path: string
  json?: unknown
  bytes?: ArrayBuffer
  contentType?: string
}

/** Sends authenticated requests with a timeout; on 401 refreshes the token once and retries the request. */
export function createTransport(options: TransportOptions) {
  async function once(spec: RequestSpec, bearer: string | null): Promise<HttpAnswer> {
    const headers: Record<string, string> = {}
    if (bearer) headers.Authorization = `Bearer ${bearer}`
    let body: BodyInit | undefined
    if (spec.json !== undefined) {
      headers['Content-Type'] = 'application/json'
      body = JSON.stringify(spec.json)
    } else if (spec.bytes) {
      headers['Content-Type'] = spec.contentType ?? 'application/octet-stream'
      body = spec.bytes
    }
    const controller = new AbortController()
    let timer: unknown
    // Raced as well as aborted: a fetch that ignores its signal must not hang the round.
    const timeout = new Promise<never>((_, reject) => {
      timer = options.timers.setTimeout(() => {
        controller.abort()
        reject(
          new TransportError(
            'timeout',
            `${spec.method} ${spec.path}: no answer in ${options.requestTimeoutMs} ms`,
          ),
        )
      }, options.requestTimeoutMs)
    })
    const sentAt = options.now()
    try {
      return await Promise.race([
        (async () => {
          const res = await options.fetch(`${options.baseUrl}${spec.path}`, {
            method: spec.method,
            headers,
            body,
            signal: controller.signal,
          })
          const text = spec.method === 'HEAD' ? '' : await res.text()
          measureClock(res.headers, sentAt, options.now())
          let parsed: unknown = null
          if (text && (res.headers.get('content-type') ?? '').includes('json')) {
            try {
              parsed = JSON.parse(text)
            } catch {
              parsed = null
            }
          }
          return { status: res.status, headers: res.headers, body: parsed }
        })(),
        timeout,
      ])
    } catch (error) {
      if (error instanceof TransportError) throw error
      throw new TransportError('network', `${spec.method} ${spec.path}: ${(error as Error).message ?? error}`)
    } finally {
      options.timers.clearTimeout(timer)
    }
  }

  function measureClock(headers: Headers, sentAt: number, receivedAt: number): void {
    const date = Date.parse(headers.get('date') ?? '')
    if (Number.isNaN(date) || !options.onClockOffset) return
    // The Date header has whole seconds: its true instant lies anywhere in that second, so aim at the middle.
    options.onClockOffset(Math.round(date + 500 - (sentAt + receivedAt) / 2))
  }

  return {
    /** Sends `spec`; throws TransportError when there is no HTTP answer or no valid sign-in. */
    async request(spec: RequestSpec): Promise<HttpAnswer> {
      // Asked each time: the session store owns the token and may have refreshed it meanwhile.
      const first = await once(spec, await options.getAccessToken())
      if (first.status !== 401) return first
      let fresh: string | null
      try {
        fresh = await options.refreshAccessToken()
      } catch (error) {
        throw new TransportError('network', `token refresh failed: ${(error as Error).message ?? error}`)
      }
      if (!fresh) throw new TransportError('signIn', 'The session has ended; sign in again.')
      const second = await once(spec, fresh)
      if (second.status === 401)
        throw new TransportError('signIn', 'The server refused the refreshed session.')
      return second
    },
  }
}

export type Transport = ReturnType<typeof createTransport>

/** Milliseconds a Retry-After header asks for (seconds or an HTTP date), or null. */
export function retryAfterMs(headers: Headers, now: number): number | null {
  const value = headers.get('retry-after')
  if (value === null) return null
  const seconds = Number(value)
  if (Number.isFinite(seconds) && seconds >= 0) return seconds * 1000
  const date = Date.parse(value)
  return Number.isNaN(date) ? null : Math.max(0, date - now)
}

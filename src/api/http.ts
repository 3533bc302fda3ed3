import type { z } from 'zod'
import { errorBodySchema } from '#shared/schemas/common'
import { useSessionStore } from '@/stores/session'
import { createTransport, globalTimers, TransportError, type RequestSpec } from '@/sync/transport'

/**
 * Online requests of the review and office screens (the field screens work through the device
 * database and sync instead). Same sign-in handling as sync: the session's token, one refresh on 401.
 */

/** The server answered with its error shape (or an unexpected status). */
export class ApiError extends Error {
  override name = 'ApiError'
  constructor(
    readonly status: number,
    readonly code: string,
    message: string,
    readonly details?: unknown,
  ) {
    super(message)
  }
}

let transport: ReturnType<typeof createTransport> | null = null

function shared() {
  if (transport) return transport
  const session = useSessionStore()
  transport = createTransport({
    baseUrl: '',
    fetch: (url, init) => fetch(url, init),
    now: () => Date.now(),
    timers: globalTimers,
    requestTimeoutMs: 30_000,
    getAccessToken: () => session.currentToken(),
    refreshAccessToken: () => session.refresh(),
  })
  return transport
}

export type Query = Record<string, string | number | boolean | undefined | null | readonly string[]>

/** `path?query` with empty values left out; arrays repeat the key. */
export function withQuery(path: string, query?: Query): string {
  if (!query) return path
  const params = new URLSearchParams()
  for (const [key, value] of Object.entries(query)) {
    if (value === undefined || value === null || value === '') continue
    if (Array.isArray(value)) for (const item of value) params.append(key, item)
    else params.append(key, String(value))
  }
  const text = params.toString()
  return text ? `${path}?${text}` : path
}

/** Readable words for a failure, whatever was thrown. */
export function failureMessage(error: unknown): string {
  if (error instanceof ApiError) return error.message
  if (error instanceof TransportError)
    return error.kind === 'signIn'
      ? 'Your session has ended. Sign in again.'
      : 'The server cannot be reached. Check the connection and try again.'
  return error instanceof Error ? error.message : String(error)
}

interface Call<S extends z.ZodType> {
  query?: Query
  json?: unknown
  /** Raw body (a CSV file, say) with its content type. */
  text?: { body: string; contentType: string }
  /** Validates the answer; without it the parsed JSON is returned as unknown. */
  schema?: S
}

/** Sends one request; resolves the parsed body of a 2xx answer, throws ApiError or TransportError. */
export async function api<S extends z.ZodType = z.ZodUnknown>(
  method: RequestSpec['method'],
  path: string,
  call: Call<S> = {},
): Promise<z.infer<S>> {
  const spec: RequestSpec = { method, path: withQuery(path, call.query), json: call.json }
  if (call.text) {
    spec.bytes = new TextEncoder().encode(call.text.body).buffer as ArrayBuffer
    spec.contentType = call.text.contentType
  }
  const answer = await shared().request(spec)
  if (answer.status < 200 || answer.status >= 300) {
    const parsed = errorBodySchema.safeParse(answer.body)
    if (parsed.success)
      throw new ApiError(
        answer.status,
        parsed.data.error.code,
        parsed.data.error.message,
        parsed.data.error.details,
      )
    throw new ApiError(answer.status, 'http_error', `The server answered ${answer.status}.`)
  }
  return (call.schema ? call.schema.parse(answer.body) : answer.body) as z.infer<S>
}

/** Fetches a file the server builds (CSV, XLSX, PDF) and hands it to the browser as a download. */
export async function download(path: string, query?: Query): Promise<void> {
  const session = useSessionStore()
  const url = withQuery(path, query)
  const get = (token: string | null) =>
    fetch(url, { headers: token ? { Authorization: `Bearer ${token}` } : {} })
  let res = await get(session.accessToken)
  if (res.status === 401) {
    const fresh = await session.refresh()
    if (!fresh) throw new TransportError('signIn', 'The session has ended; sign in again.')
    res = await get(fresh)
  }
  if (!res.ok) {
    const parsed = errorBodySchema.safeParse(await res.json().catch(() => null))
    throw parsed.success
      ? new ApiError(res.status, parsed.data.error.code, parsed.data.error.message, parsed.data.error.details)
      : new ApiError(res.status, 'http_error', `The server answered ${res.status}.`)
  }
  const name = /filename="([^"]+)"/.exec(res.headers.get('content-disposition') ?? '')?.[1] ?? 'download'
  const link = document.createElement('a')
  link.href = URL.createObjectURL(await res.blob())
  link.download = name
  link.click()
  setTimeout(() => URL.revokeObjectURL(link.href), 10_000)
}

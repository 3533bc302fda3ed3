import { z } from 'zod'
import { errorBodySchema } from '#shared/schemas/common'
import { userSchema } from '#shared/schemas/user'

/** The signed-in person as the server describes them (GET /api/auth/me, sign-in, refresh). */
export const sessionUserSchema = userSchema.pick({
  id: true,
  email: true,
  name: true,
  role: true,
  crewId: true,
})
export type SessionUser = z.infer<typeof sessionUserSchema>

const sessionSchema = z.object({
  accessToken: z.string().min(1),
  expiresIn: z.number(),
  user: sessionUserSchema,
})
export type SessionAnswer = z.infer<typeof sessionSchema>

/** The server answered and refused (wrong password, spent refresh token, rate limit). */
export class AuthRefusedError extends Error {
  override name = 'AuthRefusedError'
  constructor(
    readonly status: number,
    readonly code: string,
    message: string,
  ) {
    super(message)
  }
}

// A network that connects but never answers would otherwise hold a sign-in or refresh, and every request
// waiting on the refresh, for as long as the browser keeps the connection.
const authTimeoutMs = 20_000

async function post(path: string, body?: unknown): Promise<Response> {
  // Network failures and the time limit reject here (TypeError, TimeoutError): the caller treats them as
  // "unreachable", not "refused".
  return fetch(path, {
    method: 'POST',
    credentials: 'same-origin',
    signal: AbortSignal.timeout(authTimeoutMs),
    headers: body === undefined ? {} : { 'content-type': 'application/json' },
    body: body === undefined ? undefined : JSON.stringify(body),
  })
}

async function refusal(response: Response): Promise<AuthRefusedError> {
  const parsed = errorBodySchema.safeParse(await response.json().catch(() => null))
  return parsed.success
    ? new AuthRefusedError(response.status, parsed.data.error.code, parsed.data.error.message)
    : new AuthRefusedError(response.status, 'http_error', `The server answered ${response.status}.`)
}

/** Signs in with e-mail and password; the refresh cookie is set by the answer. */
export async function signInRequest(email: string, password: string): Promise<SessionAnswer> {
  const response = await post('/api/auth/sign-in', { email, password })
  if (!response.ok) throw await refusal(response)
  return sessionSchema.parse(await response.json())
}

/** Trades the refresh cookie for a new access token; null when the server refuses it (sign in again). */
export async function refreshRequest(): Promise<SessionAnswer | null> {
  const response = await post('/api/auth/refresh')
  if (response.status === 401 || response.status === 403) return null
  if (!response.ok) throw await refusal(response)
  return sessionSchema.parse(await response.json())
}

/** Ends the refresh-token family on the server and clears the cookie. */
export async function signOutRequest(): Promise<void> {
  await post('/api/auth/sign-out')
}

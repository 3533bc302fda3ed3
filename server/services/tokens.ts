import { createHash, randomBytes } from 'node:crypto'
import { errors, jwtVerify, SignJWT } from 'jose'
import type { Config } from '../config'
import { unauthorized } from '../errors'

const algorithm = 'HS256'

export interface AccessClaims {
  userId: string
  tokenVersion: number
}

/** Signs a short-lived access token carrying only the user id and token version (role is read per request). */
export async function signAccessToken(
  config: Config,
  claims: AccessClaims,
  now = Date.now(),
): Promise<string> {
  const iat = Math.floor(now / 1000)
  return new SignJWT({ tv: claims.tokenVersion })
    .setProtectedHeader({ alg: algorithm, typ: 'JWT' })
    .setSubject(claims.userId)
    .setIssuer(config.jwtIssuer)
    .setAudience(config.jwtAudience)
    .setIssuedAt(iat)
    .setNotBefore(iat)
    .setExpirationTime(iat + config.accessTokenSeconds)
    .sign(config.jwtSecret)
}

// The verifying key, imported once per secret: jose imports raw bytes again on every call, which was about
// half of verifying a token (tests/bench/push.bench.ts, once per push request).
const verifyKeys = new WeakMap<Uint8Array, Promise<CryptoKey>>()

function verifyKey(secret: Uint8Array): Promise<CryptoKey> {
  let key = verifyKeys.get(secret)
  if (!key) {
    const raw = new Uint8Array(secret)
    key = crypto.subtle.importKey('raw', raw, { name: 'HMAC', hash: 'SHA-256' }, false, ['verify'])
    verifyKeys.set(secret, key)
  }
  return key
}

// Tokens this process has verified, with what they carry: the same bytes under the same secret verify the
// same way, so only the times are checked again. A device pushes batch after batch with one token, and each
// verification is two trips to the crypto thread pool, about 1 ms of every push (tests/bench/push.bench.ts).
interface Verified {
  claims: AccessClaims
  notBefore: number
  expires: number
}
const verifiedTokens = new WeakMap<Uint8Array, Map<string, Verified>>()
const verifiedKept = 1000

function verifiedToken(config: Config, token: string): AccessClaims | undefined {
  const found = verifiedTokens.get(config.jwtSecret)?.get(token)
  if (!found) return undefined
  // As jose judges them: expired once now reaches exp, not yet valid while nbf is ahead of now.
  const now = Math.floor(Date.now() / 1000)
  if (now >= found.expires || found.notBefore > now) return undefined
  return found.claims
}

function keepVerified(config: Config, token: string, entry: Verified): void {
  let kept = verifiedTokens.get(config.jwtSecret)
  if (!kept) {
    kept = new Map()
    verifiedTokens.set(config.jwtSecret, kept)
  }
  if (kept.size >= verifiedKept) kept.clear()
  kept.set(token, entry)
}

/** Verifies signature, algorithm, issuer, audience and times; any failure is a 401. */
export async function verifyAccessToken(config: Config, token: string): Promise<AccessClaims> {
  const known = verifiedToken(config, token)
  if (known) return known
  try {
    const { payload } = await jwtVerify(token, await verifyKey(config.jwtSecret), {
      algorithms: [algorithm],
      issuer: config.jwtIssuer,
      audience: config.jwtAudience,
      requiredClaims: ['sub', 'exp', 'nbf', 'iat'],
    })
    if (typeof payload.sub !== 'string' || typeof payload.tv !== 'number')
      throw unauthorized('The token is not valid.')
    const claims = { userId: payload.sub, tokenVersion: payload.tv }
    // requiredClaims makes both numbers.
    keepVerified(config, token, { claims, notBefore: payload.nbf!, expires: payload.exp! })
    return claims
  } catch (error) {
    if (error instanceof errors.JWTExpired) throw unauthorized('Your session has expired; sign in again.')
    if (error instanceof errors.JOSEError) throw unauthorized('The token is not valid.')
    throw error
  }
}

/** A new opaque refresh token (sent to the browser) and the hash that is stored in its place. */
export function newRefreshToken(): { token: string; hash: string } {
  const token = randomBytes(32).toString('base64url')
  return { token, hash: hashRefreshToken(token) }
}

export function hashRefreshToken(token: string): string {
  return createHash('sha256').update(token).digest('hex')
}

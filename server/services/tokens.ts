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

/** Verifies signature, algorithm, issuer, audience and times; any failure is a 401. */
export async function verifyAccessToken(config: Config, token: string): Promise<AccessClaims> {
  try {
    const { payload } = await jwtVerify(token, config.jwtSecret, {
      algorithms: [algorithm],
      issuer: config.jwtIssuer,
      audience: config.jwtAudience,
      requiredClaims: ['sub', 'exp', 'nbf', 'iat'],
    })
    if (typeof payload.sub !== 'string' || typeof payload.tv !== 'number')
      throw unauthorized('The token is not valid.')
    return { userId: payload.sub, tokenVersion: payload.tv }
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

import { SignJWT, base64url } from 'jose'
import request from 'supertest'
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest'
import { signAccessToken } from '../../server/services/tokens'
import { findUserByEmail } from '../../server/repositories/users'
import { demoUser, makeTestApp, tableCounts, type TestApp } from './support/app'

let t: TestApp
beforeEach(() => {
  t = makeTestApp()
})
afterEach(() => t.close())

const me = (token: string) => request(t.app).get('/api/auth/me').set('Authorization', `Bearer ${token}`)
const office = () => findUserByEmail(t.database, demoUser('office').email)!

function refreshCookie(res: request.Response): string {
  const cookies = ([] as string[]).concat(res.headers['set-cookie'] ?? [])
  const cookie = cookies.find((c) => c.startsWith('ls_refresh='))
  if (!cookie) throw new Error('no refresh cookie')
  return cookie.split(';')[0]!
}

describe('sign-in', () => {
  it('when the password is right, then an access token and an HttpOnly SameSite=Strict refresh cookie come back', async () => {
    const user = demoUser('splicer')
    const res = await request(t.app)
      .post('/api/auth/sign-in')
      .send({ email: user.email.toUpperCase(), password: user.password })
    expect(res.status).toBe(200)
    expect(res.body.user).toMatchObject({ email: user.email, role: 'splicer' })
    expect(res.body.expiresIn).toBe(900)
    const cookie = ([] as string[])
      .concat(res.headers['set-cookie'] ?? [])
      .find((c) => c.startsWith('ls_refresh='))!
    expect(cookie).toMatch(/HttpOnly/i)
    expect(cookie).toMatch(/SameSite=Strict/i)
    expect(cookie).toMatch(/Path=\/api\/auth/)
    const who = await me(res.body.accessToken)
    expect(who.status).toBe(200)
    expect(who.body.user.role).toBe('splicer')
  })

  it('when the user is unknown or the password wrong, then the answer is the same', async () => {
    const wrong = await request(t.app)
      .post('/api/auth/sign-in')
      .send({ email: demoUser('office').email, password: 'not-the-password' })
    const unknown = await request(t.app)
      .post('/api/auth/sign-in')
      .send({ email: 'nobody@example.test', password: 'not-the-password' })
    expect(wrong.status).toBe(401)
    expect(unknown.status).toBe(401)
    expect(unknown.body).toEqual(wrong.body)
    expect(wrong.body.error.code).toBe('unauthorized')
  })

  it('when one account fails too often, then it is rate-limited with Retry-After', async () => {
    const email = demoUser('foreman').email
    for (let i = 0; i < t.config.signInLimits.perAccount; i += 1) {
      expect(
        (
          await request(t.app)
            .post('/api/auth/sign-in')
            .send({ email, password: `wrong-${i}` })
        ).status,
      ).toBe(401)
    }
    const blocked = await request(t.app)
      .post('/api/auth/sign-in')
      .send({ email, password: demoUser('foreman').password })
    expect(blocked.status).toBe(429)
    expect(blocked.body.error.code).toBe('rate_limited')
    expect(Number(blocked.headers['retry-after'])).toBeGreaterThan(0)
    // Another account from the same address is not locked by it.
    const other = demoUser('office')
    expect(
      (await request(t.app).post('/api/auth/sign-in').send({ email: other.email, password: other.password }))
        .status,
    ).toBe(200)
  })

  it('when one address tries too often, then every account is rate-limited from there', async () => {
    const limited = makeTestApp({ signInLimits: { windowMs: 60_000, perAccount: 100, perAddress: 3 } })
    try {
      for (let i = 0; i < 3; i += 1) {
        await request(limited.app)
          .post('/api/auth/sign-in')
          .send({ email: `u${i}@example.test`, password: 'x' })
      }
      const res = await request(limited.app)
        .post('/api/auth/sign-in')
        .send({ email: 'u9@example.test', password: 'x' })
      expect(res.status).toBe(429)
      expect(res.headers['retry-after']).toBeDefined()
    } finally {
      await limited.close()
    }
  })

  it('when the body is malformed or has unknown keys, then 400 and nothing is written', async () => {
    const before = tableCounts(t.database)
    const bad = await request(t.app)
      .post('/api/auth/sign-in')
      .set('Content-Type', 'application/json')
      .send('{"email":')
    expect(bad.status).toBe(400)
    expect(bad.body.error.code).toBe('malformed_json')
    const extra = await request(t.app)
      .post('/api/auth/sign-in')
      .send({ email: 'a@b.test', password: 'x', admin: true })
    expect(extra.status).toBe(400)
    expect(extra.body.error.details).toEqual(
      expect.arrayContaining([expect.objectContaining({ message: expect.any(String) })]),
    )
    const form = await request(t.app).post('/api/auth/sign-in').type('form').send('email=a&password=b')
    expect(form.status).toBe(415)
    expect(tableCounts(t.database)).toEqual(before)
  })
})

describe('access tokens', () => {
  const now = Date.now()

  it('when no token or a garbage header is sent, then 401', async () => {
    expect((await request(t.app).get('/api/auth/me')).status).toBe(401)
    expect((await request(t.app).get('/api/auth/me').set('Authorization', 'Basic abc')).status).toBe(401)
    expect((await me('not.a.jwt')).status).toBe(401)
  })

  it('when the token has expired, then 401', async () => {
    const token = await signAccessToken(
      t.config,
      { userId: office().id, tokenVersion: office().tokenVersion },
      now - 16 * 60_000,
    )
    const res = await me(token)
    expect(res.status).toBe(401)
    expect(res.body.error.message).toMatch(/expired/)
  })

  it('when a token that was accepted runs out, then the next request with it is 401 expired', async () => {
    // Verified tokens are remembered; their times must still be judged on every request.
    const token = await signAccessToken(t.config, {
      userId: office().id,
      tokenVersion: office().tokenVersion,
    })
    expect((await me(token)).status).toBe(200)
    vi.useFakeTimers({ toFake: ['Date'] })
    try {
      vi.setSystemTime(Date.now() + 16 * 60_000)
      const res = await me(token)
      expect(res.status).toBe(401)
      expect(res.body.error.message).toMatch(/expired/)
    } finally {
      vi.useRealTimers()
    }
  })

  it('when the token is not yet valid, then 401', async () => {
    const token = await signAccessToken(
      t.config,
      { userId: office().id, tokenVersion: office().tokenVersion },
      now + 10 * 60_000,
    )
    expect((await me(token)).status).toBe(401)
  })

  it('when the token says alg none, then 401', async () => {
    const iat = Math.floor(now / 1000)
    const header = base64url.encode(JSON.stringify({ alg: 'none', typ: 'JWT' }))
    const payload = base64url.encode(
      JSON.stringify({
        sub: office().id,
        tv: 0,
        iss: t.config.jwtIssuer,
        aud: t.config.jwtAudience,
        iat,
        nbf: iat,
        exp: iat + 600,
      }),
    )
    expect((await me(`${header}.${payload}.`)).status).toBe(401)
  })

  it('when the token is signed with another algorithm, issuer, audience or key, then 401', async () => {
    const iat = Math.floor(now / 1000)
    const base = () =>
      new SignJWT({ tv: 0 })
        .setSubject(office().id)
        .setIssuedAt(iat)
        .setNotBefore(iat)
        .setExpirationTime(iat + 600)
    const variants = [
      await base()
        .setProtectedHeader({ alg: 'HS512' })
        .setIssuer(t.config.jwtIssuer)
        .setAudience(t.config.jwtAudience)
        .sign(t.config.jwtSecret),
      await base()
        .setProtectedHeader({ alg: 'HS256' })
        .setIssuer('someone-else')
        .setAudience(t.config.jwtAudience)
        .sign(t.config.jwtSecret),
      await base()
        .setProtectedHeader({ alg: 'HS256' })
        .setIssuer(t.config.jwtIssuer)
        .setAudience('other-app')
        .sign(t.config.jwtSecret),
      await base()
        .setProtectedHeader({ alg: 'HS256' })
        .setIssuer(t.config.jwtIssuer)
        .setAudience(t.config.jwtAudience)
        .sign(new TextEncoder().encode('another-secret-another-secret-0123456789')),
    ]
    for (const token of variants) expect((await me(token)).status).toBe(401)
  })

  it('when the payload or the signature is tampered with, then 401', async () => {
    const token = await signAccessToken(t.config, {
      userId: findUserByEmail(t.database, demoUser('splicer').email)!.id,
      tokenVersion: 0,
    })
    const [h, p, s] = token.split('.') as [string, string, string]
    const claims = JSON.parse(new TextDecoder().decode(base64url.decode(p)))
    const forged = base64url.encode(JSON.stringify({ ...claims, sub: office().id }))
    expect((await me(`${h}.${forged}.${s}`)).status).toBe(401)
    const flipped = s.slice(0, -2) + (s.endsWith('AA') ? 'BB' : 'AA')
    expect((await me(`${h}.${p}.${flipped}`)).status).toBe(401)
  })

  it('when the user is disabled or their role changes, then tokens already issued stop working at once', async () => {
    const officeToken = await t.tokenFor('office')
    const splicerToken = (await t.tokenFor('splicer')).slice('Bearer '.length)
    const foremanToken = (await t.tokenFor('foreman')).slice('Bearer '.length)
    expect((await me(splicerToken)).status).toBe(200)
    const splicer = findUserByEmail(t.database, demoUser('splicer').email)!
    const foreman = findUserByEmail(t.database, demoUser('foreman').email)!
    expect(
      (
        await request(t.app)
          .patch(`/api/users/${splicer.id}`)
          .set('Authorization', officeToken)
          .send({ active: false })
      ).status,
    ).toBe(200)
    expect((await me(splicerToken)).status).toBe(401)
    const again = await request(t.app)
      .post('/api/auth/sign-in')
      .send({ email: demoUser('splicer').email, password: demoUser('splicer').password })
    expect(again.status).toBe(401)

    expect(
      (
        await request(t.app)
          .patch(`/api/users/${foreman.id}`)
          .set('Authorization', officeToken)
          .send({ role: 'splicer' })
      ).status,
    ).toBe(200)
    expect((await me(foremanToken)).status).toBe(401)
    const fresh = await request(t.app)
      .post('/api/auth/sign-in')
      .send({ email: demoUser('foreman').email, password: demoUser('foreman').password })
    expect(fresh.body.user.role).toBe('splicer')
  })
})

describe('refresh tokens', () => {
  async function signIn() {
    const user = demoUser('splicer')
    return request(t.app).post('/api/auth/sign-in').send({ email: user.email, password: user.password })
  }

  it('when a refresh token is used, then it is rotated and the new access token works', async () => {
    const first = refreshCookie(await signIn())
    const res = await request(t.app).post('/api/auth/refresh').set('Cookie', first)
    expect(res.status).toBe(200)
    expect((await me(res.body.accessToken)).status).toBe(200)
    expect(refreshCookie(res)).not.toBe(first)
  })

  it('when a rotated refresh token is used again, then the whole family is revoked', async () => {
    const first = refreshCookie(await signIn())
    const rotated = await request(t.app).post('/api/auth/refresh').set('Cookie', first)
    const second = refreshCookie(rotated)
    const reuse = await request(t.app).post('/api/auth/refresh').set('Cookie', first)
    expect(reuse.status).toBe(401)
    // The thief's reuse also ends the legitimate holder's newer token.
    expect((await request(t.app).post('/api/auth/refresh').set('Cookie', second)).status).toBe(401)
  })

  it('when the office resets the password or disables the account, then refresh tokens stop working too', async () => {
    const stolen = refreshCookie(await signIn())
    const office = await t.tokenFor('office')
    const splicer = findUserByEmail(t.database, demoUser('splicer').email)!
    const reset = await request(t.app)
      .patch(`/api/users/${splicer.id}`)
      .set('Authorization', office)
      .send({ password: 'a brand new long password' })
    expect(reset.status).toBe(200)
    expect((await request(t.app).post('/api/auth/refresh').set('Cookie', stolen)).status).toBe(401)
  })

  it('when signed out, then the refresh token no longer works', async () => {
    const cookie = refreshCookie(await signIn())
    expect((await request(t.app).post('/api/auth/sign-out').set('Cookie', cookie)).status).toBe(204)
    expect((await request(t.app).post('/api/auth/refresh').set('Cookie', cookie)).status).toBe(401)
    expect((await request(t.app).post('/api/auth/refresh')).status).toBe(401)
  })
})

import { Writable } from 'node:stream'
import request from 'supertest'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { demoUsers } from '#db/seed'
import { createLogger, loggableUrl } from '../../server/middleware/logging'
import { makeTestApp, type TestApp } from './support/app'

// The request log: one JSON line per request with its id, and nothing in it that would let a reader sign in.

const lines: string[] = []
const sink = new Writable({
  write(chunk: Buffer, _encoding, done) {
    lines.push(...chunk.toString().split('\n').filter(Boolean))
    done()
  },
})

let t: TestApp
beforeAll(() => {
  t = makeTestApp({ logLevel: 'info' }, { logger: createLogger('info', sink) })
})
afterAll(() => t.close())

interface LogLine {
  level: number
  responseTime?: number
  req?: { id: string; method: string; url: string }
  res?: { statusCode: number }
}
const parsed = () => lines.map((line) => JSON.parse(line) as LogLine)

describe('request logging', () => {
  it('when requests come in, then each gets a line with its id, method, path, status and time, and the id is answered back', async () => {
    lines.length = 0
    const res = await request(t.app)
      .get('/api/projects')
      .set('Authorization', await t.tokenFor('office'))
    expect(res.status).toBe(200)
    const id = res.headers['x-request-id']
    expect(id).toMatch(/^[0-9a-f-]{36}$/)
    const line = parsed().find((entry) => entry.req?.url === '/api/projects')
    expect(line).toMatchObject({ req: { id, method: 'GET' }, res: { statusCode: 200 }, level: 30 })
    expect(typeof line?.responseTime).toBe('number')
    // A caller's own request id (a proxy's) is kept; a malformed one is replaced.
    const kept = await request(t.app).get('/api/health').set('X-Request-Id', 'edge-proxy-0042')
    expect(kept.headers['x-request-id']).toBe('edge-proxy-0042')
    const replaced = await request(t.app).get('/api/health').set('X-Request-Id', 'bad id with spaces')
    expect(replaced.headers['x-request-id']).toMatch(/^[0-9a-f-]{36}$/)
  })

  it('when people sign in, refresh and sync, then no password, token or cookie reaches the log', async () => {
    lines.length = 0
    const user = demoUsers.find((u) => u.key === 'splicer')!
    const signIn = await request(t.app)
      .post('/api/auth/sign-in')
      .send({ email: user.email, password: user.password })
    expect(signIn.status).toBe(200)
    const access = signIn.body.accessToken as string
    const cookie = ([] as string[]).concat(signIn.headers['set-cookie'] ?? [])[0]!.split(';')[0]!
    const refreshed = await request(t.app).post('/api/auth/refresh').set('Cookie', cookie)
    expect(refreshed.status).toBe(200)
    await request(t.app)
      .get('/api/sync/pull?cursor=0&token=abc123secretvalue')
      .set('Authorization', `Bearer ${access}`)
    await request(t.app).post('/api/auth/sign-in').send({ email: user.email, password: 'wrong-password-9' })
    const log = lines.join('\n')
    expect(lines.length).toBeGreaterThanOrEqual(4)
    for (const secret of [
      user.password,
      'wrong-password-9',
      access,
      refreshed.body.accessToken as string,
      cookie.split('=')[1]!,
      'abc123secretvalue',
    ]) {
      expect(log.includes(secret), `log holds ${secret.slice(0, 12)}…`).toBe(false)
    }
    expect(log).not.toMatch(/authorization|set-cookie|"cookie"/i)
    // The refused sign-in is a warning line; the pull's query is there with its secret masked.
    expect(parsed().some((entry) => entry.res?.statusCode === 401 && entry.level === 40)).toBe(true)
    expect(parsed().some((entry) => entry.req?.url === '/api/sync/pull?cursor=0&token=%5Bredacted%5D')).toBe(
      true,
    )
  })

  it('when the health probe runs, then it writes no line', async () => {
    lines.length = 0
    await request(t.app).get('/api/health')
    expect(parsed().filter((entry) => entry.req?.url === '/api/health')).toEqual([])
  })
})

describe('loggableUrl', () => {
  it('masks secret-sounding query values and keeps the rest', () => {
    expect(loggableUrl('/api/x?limit=5&resetToken=abc&password=p&apiKey=k')).toBe(
      '/api/x?limit=5&resetToken=%5Bredacted%5D&password=%5Bredacted%5D&apiKey=%5Bredacted%5D',
    )
    expect(loggableUrl('/api/closures')).toBe('/api/closures')
    expect(loggableUrl(undefined)).toBe('')
  })
})

import { createServer } from 'node:net'
import request from 'supertest'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { errorBodySchema } from '#shared/schemas/common'
import { makeTestApp, type TestApp } from './support/app'

// Liveness and readiness: what a supervisor or balancer asks before sending crews' work to this server.

let t: TestApp
beforeAll(() => {
  t = makeTestApp()
})
afterAll(() => t.close())

describe('health and readiness', () => {
  it('when the server is up, then health answers ok with the version, without signing in', async () => {
    const res = await request(t.app).get('/api/health')
    expect(res.status).toBe(200)
    expect(res.body).toEqual({ status: 'ok', version: 'test' })
  })

  it('when migrations are applied and the photo store is usable, then it is ready', async () => {
    const res = await request(t.app).get('/api/ready')
    expect(res.status).toBe(200)
    expect(res.body.status).toBe('ready')
    expect(res.body.migrations).toBeGreaterThanOrEqual(6)
  })

  it('when the server has begun to stop, then readiness answers 503 in the error shape while health still answers', async () => {
    t.ctx.lifecycle.stopping = true
    try {
      const res = await request(t.app).get('/api/ready')
      expect(res.status).toBe(503)
      expect(errorBodySchema.parse(res.body).error.code).toBe('not_ready')
      expect(res.body.error.message).toMatch(/stopping/)
      expect((await request(t.app).get('/api/health')).status).toBe(200)
    } finally {
      t.ctx.lifecycle.stopping = false
    }
  })

  it('when the configured object store cannot be reached, then readiness says so', async () => {
    // A port that was free a moment ago: nothing listens there, so every S3 call is refused.
    const port = await new Promise<number>((resolve) => {
      const probe = createServer().listen(0, '127.0.0.1', () => {
        const { port } = probe.address() as { port: number }
        probe.close(() => resolve(port))
      })
    })
    const s3 = makeTestApp({
      storage: {
        driver: 's3',
        bucket: 'nowhere',
        region: 'us-east-1',
        endpoint: `http://127.0.0.1:${port}`,
        accessKeyId: 'x',
        secretAccessKey: 'y',
        prefix: '',
      },
    })
    try {
      const res = await request(s3.app).get('/api/ready')
      expect(res.status).toBe(503)
      expect(res.body.error.message).toMatch(/photo store/)
    } finally {
      s3.close()
    }
  })
})

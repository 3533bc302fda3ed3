import { existsSync, mkdtempSync, readdirSync, rmSync, statSync } from 'node:fs'
import { request as httpRequest } from 'node:http'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import Database from 'better-sqlite3'
import { v7 } from 'uuid'
import { afterAll, describe, expect, it } from 'vitest'
import { demoUsers } from '#db/seed'
import { type ChildServer, startChildServer } from './support/childServer'
import { jpegBytes, sha256 } from './support/photos'

// A graceful stop: on SIGTERM the server stops taking work, finishes the request in flight (here a photo
// still arriving), checkpoints the WAL into the database file and exits 0.

const dataDir = mkdtempSync(join(tmpdir(), 'lightseam-stop-'))
let server: ChildServer | undefined

afterAll(async () => {
  await server?.kill()
  rmSync(dataDir, { recursive: true, force: true })
})

async function signIn(base: string, key: 'splicer' | 'foreman'): Promise<string> {
  const user = demoUsers.find((u) => u.key === key)!
  const res = await fetch(`${base}/api/auth/sign-in`, {
    method: 'POST',
    headers: { 'Content-Type': 'application/json' },
    body: JSON.stringify({ email: user.email, password: user.password }),
  })
  return ((await res.json()) as { accessToken: string }).accessToken
}

describe('graceful shutdown', () => {
  it('when SIGTERM comes during an upload, then the upload completes, the WAL is folded in and the exit is clean', async () => {
    server = await startChildServer(dataDir)
    const accessToken = await signIn(server.url, 'splicer')
    const bytes = jpegBytes(1024, 768, 300_000)
    const hash = sha256(bytes)
    const url = new URL(`/api/photos/${hash}`, server.url)
    const exited = new Promise<number | null>((resolve) =>
      server!.process.once('exit', (code) => resolve(code)),
    )

    const answer = new Promise<{ status: number; body: string }>((resolve, reject) => {
      const req = httpRequest(
        url,
        {
          method: 'PUT',
          headers: {
            Authorization: `Bearer ${accessToken}`,
            'Content-Type': 'image/jpeg',
            'Content-Length': bytes.length,
          },
        },
        (res) => {
          let body = ''
          res.on('data', (chunk: Buffer) => (body += chunk.toString()))
          res.on('end', () => resolve({ status: res.statusCode ?? 0, body }))
        },
      )
      req.on('error', reject)
      // The first half goes now; SIGTERM arrives while the rest is still on its way.
      req.write(bytes.subarray(0, bytes.length / 2))
      setTimeout(() => {
        process.kill(server!.process.pid!, 'SIGTERM')
        setTimeout(() => req.end(bytes.subarray(bytes.length / 2)), 500)
      }, 300)
    })

    const { status, body } = await answer
    expect(status, body).toBe(201)
    expect(JSON.parse(body).sha256).toBe(hash)
    expect(await exited).toBe(0)
    // The WAL was checkpointed (TRUNCATE) before the database closed: the main file holds everything.
    const wal = join(dataDir, 'lightseam.sqlite-wal')
    expect(!existsSync(wal) || statSync(wal).size === 0).toBe(true)
    server = undefined
  }, 120_000)

  it('when SIGTERM comes right after a push signs a closure off, then its message is sent before the exit', async () => {
    const stopDir = mkdtempSync(join(tmpdir(), 'lightseam-stop-mail-'))
    try {
      server = await startChildServer(stopDir)
      const accessToken = await signIn(server.url, 'foreman')
      const file = join(stopDir, 'lightseam.sqlite')
      const seeded = new Database(file, { readonly: true, fileMustExist: true })
      const closureId = seeded
        .prepare("SELECT id FROM closures WHERE label LIKE 'PED-03%'")
        .pluck()
        .get() as string
      seeded.close()
      const exited = new Promise<number | null>((resolve) =>
        server!.process.once('exit', (code) => resolve(code)),
      )
      const res = await fetch(`${server.url}/api/sync/push`, {
        method: 'POST',
        headers: { 'Content-Type': 'application/json', Authorization: `Bearer ${accessToken}` },
        body: JSON.stringify({
          clientId: v7(),
          schemaVersion: 1,
          mutations: [
            {
              seq: 1,
              name: 'signOffClosure',
              args: { closureId },
              baseServerSeq: 0,
              clientTime: '2025-06-11T08:15:30.000+01:00',
            },
          ],
        }),
      })
      expect(res.status).toBe(200)
      expect(((await res.json()) as { results: Array<{ status: string }> }).results[0]!.status).toBe(
        'applied',
      )
      // The close-out report and its message are still being made: SIGTERM now.
      process.kill(server.process.pid!, 'SIGTERM')
      expect(await exited).toBe(0)
      server = undefined

      const db = new Database(file, { readonly: true, fileMustExist: true })
      try {
        const logged = db.prepare("SELECT state FROM mail_log WHERE kind = 'signed_off'").all()
        expect(logged).toEqual([{ state: 'sent' }])
      } finally {
        db.close()
      }
      expect(readdirSync(join(stopDir, 'mail')).filter((name) => name.endsWith('.eml'))).toHaveLength(1)
    } finally {
      rmSync(stopDir, { recursive: true, force: true })
    }
  }, 120_000)
})

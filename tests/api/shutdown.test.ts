import { existsSync, mkdtempSync, rmSync, statSync } from 'node:fs'
import { request as httpRequest } from 'node:http'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
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

describe('graceful shutdown', () => {
  it('when SIGTERM comes during an upload, then the upload completes, the WAL is folded in and the exit is clean', async () => {
    server = await startChildServer(dataDir)
    const splicer = demoUsers.find((u) => u.key === 'splicer')!
    const signIn = await fetch(`${server.url}/api/auth/sign-in`, {
      method: 'POST',
      headers: { 'Content-Type': 'application/json' },
      body: JSON.stringify({ email: splicer.email, password: splicer.password }),
    })
    const { accessToken } = (await signIn.json()) as { accessToken: string }
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
})

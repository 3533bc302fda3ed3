import { spawn } from 'node:child_process'
import { copyFileSync, existsSync, mkdirSync, mkdtempSync, rmSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import BetterSqlite3 from 'better-sqlite3'
import { v7 as uuidv7 } from 'uuid'
import { afterAll, describe, expect, it } from 'vitest'
import { demoUsers } from '#db/seed'
import { pushResponseSchema } from '#shared/schemas/sync'
import { type ChildServer, startChildServer } from './support/childServer'
import { syncInvariantProblems } from './support/invariants'
import { mutation, type Pushed } from './support/sync'

// `npm run db:backup` while the server takes pushes, then a restore: the copy keeps every sync promise on
// its own, and devices resending their work to the restored server converge on exactly one effect each.

const root = mkdtempSync(join(tmpdir(), 'lightseam-backup-'))
const liveDir = join(root, 'live')
const restoredDir = join(root, 'restored')
const backupFile = join(root, 'copies', 'lightseam-backup.sqlite')
let server: ChildServer | undefined

afterAll(async () => {
  await server?.kill()
  rmSync(root, { recursive: true, force: true })
})

async function signIn(url: string): Promise<string> {
  const splicer = demoUsers.find((u) => u.key === 'splicer')!
  const res = await fetch(`${url}/api/auth/sign-in`, {
    method: 'POST',
    headers: { 'Content-Type': 'application/json' },
    body: JSON.stringify({ email: splicer.email, password: splicer.password }),
  })
  expect(res.status).toBe(200)
  return `Bearer ${((await res.json()) as { accessToken: string }).accessToken}`
}

async function push(url: string, auth: string, clientId: string, mutations: Pushed[]) {
  const res = await fetch(`${url}/api/sync/push`, {
    method: 'POST',
    headers: { 'Content-Type': 'application/json', Authorization: auth },
    body: JSON.stringify({ clientId, schemaVersion: 1, mutations }),
  })
  expect(res.status).toBe(200)
  return pushResponseSchema.parse(await res.json())
}

/** Runs the backup command as an operator would, beside the running server. */
function runBackup(dbFile: string, dest: string): Promise<{ code: number | null; output: string }> {
  return new Promise((resolve) => {
    const child = spawn(process.execPath, ['--import', 'tsx', 'db/backup-cli.ts', dest], {
      env: { ...process.env, LIGHTSEAM_DB: dbFile },
      stdio: ['ignore', 'pipe', 'pipe'],
    })
    let output = ''
    child.stdout.on('data', (chunk: Buffer) => (output += chunk.toString()))
    child.stderr.on('data', (chunk: Buffer) => (output += chunk.toString()))
    child.on('exit', (code) => resolve({ code, output }))
  })
}

const countSplices = (file: string, clientId: string) => {
  const db = new BetterSqlite3(file, { readonly: true })
  try {
    return (
      db.prepare('SELECT count(*) AS n FROM splices WHERE client_id = ?').get(clientId) as { n: number }
    ).n
  } finally {
    db.close()
  }
}

describe('online backup and restore', () => {
  it('when a backup runs during pushes and is restored, then the copy keeps the sync invariants and resends converge', async () => {
    mkdirSync(liveDir, { recursive: true })
    server = await startChildServer(liveDir)
    const liveFile = join(liveDir, 'lightseam.sqlite')
    const seed = new BetterSqlite3(liveFile, { readonly: true })
    const slots = seed
      .prepare(
        `SELECT p.closure_id AS closureId, p.tray_id AS trayId, p.slot, p.cable_a_id AS cableAId, p.fiber_a AS fiberA,
           p.cable_b_id AS cableBId, p.fiber_b AS fiberB
         FROM plan_rows p JOIN closures c ON c.id = p.closure_id WHERE c.label LIKE 'HH-02%'`,
      )
      .all() as Array<Record<string, unknown>>
    const splicerId = (seed.prepare("SELECT id FROM users WHERE email LIKE 'maren%'").get() as { id: string })
      .id
    seed.close()

    const clientId = uuidv7()
    const perBatch = 20
    const all: Pushed[][] = []
    const nextBatch = (): Pushed[] =>
      Array.from({ length: perBatch }, (_, i) => {
        const seq = all.length * perBatch + i + 1
        return mutation(seq, 'createSplice', {
          id: uuidv7(),
          ...slots[seq % slots.length],
          method: 'single_fusion',
          lossDb: ((seq * 37) % 200) / 1000,
          splicedAt: new Date(Date.UTC(2025, 5, 11, 8) + seq * 1000).toISOString(),
          splicerId,
          clientId,
        })
      })
    let auth = await signIn(server.url)
    let acknowledged = 0
    const send = async () => {
      const batch = nextBatch()
      all.push(batch)
      const answer = await push(server!.url, auth, clientId, batch)
      expect(answer.results.every((r) => r.status === 'applied')).toBe(true)
      acknowledged = answer.lastSeq
    }
    for (let b = 0; b < 10; b += 1) await send()
    // The backup runs while batches keep arriving, and a few more come after it has finished.
    const acknowledgedAtStart = acknowledged
    let finished = false
    const backup = runBackup(liveFile, backupFile).finally(() => (finished = true))
    let during = 0
    while (!finished && all.length < 2000) {
      await send()
      during += 1
    }
    for (let b = 0; b < 5; b += 1) await send()
    const batches = all.length
    const result = await backup
    expect(result.code, result.output).toBe(0)
    expect(result.output).toMatch(/integrity ok/)
    await server.stop()
    server = undefined

    // The copy on its own: whole, consistent, holding at least what was acknowledged before it started.
    expect(existsSync(`${backupFile}-wal`)).toBe(false)
    const copy = new BetterSqlite3(backupFile)
    expect(syncInvariantProblems(copy)).toEqual([])
    copy.close()
    const inCopy = countSplices(backupFile, clientId)
    expect(inCopy).toBeGreaterThanOrEqual(acknowledgedAtStart)
    expect(inCopy).toBeLessThan(acknowledged)
    console.warn(
      `backup: ${acknowledgedAtStart} acknowledged when it started, ${during} batches during it, ` +
        `${inCopy} in the copy, ${acknowledged} at the end`,
    )

    // Restore: the copy becomes the database; the device sends its work again from seq 1 with the same ids.
    mkdirSync(restoredDir, { recursive: true })
    copyFileSync(backupFile, join(restoredDir, 'lightseam.sqlite'))
    server = await startChildServer(restoredDir)
    auth = await signIn(server.url)
    let duplicates = 0
    for (const batch of all) {
      const answer = await push(server.url, auth, clientId, batch)
      for (const r of answer.results) {
        expect(['applied', 'duplicate']).toContain(r.status)
        if (r.status === 'duplicate') duplicates += 1
      }
    }
    expect(duplicates).toBe(inCopy)
    await server.stop()
    server = undefined
    const restored = join(restoredDir, 'lightseam.sqlite')
    expect(countSplices(restored, clientId)).toBe(batches * perBatch)
    const after = new BetterSqlite3(restored)
    expect(syncInvariantProblems(after)).toEqual([])
    after.close()
  }, 240_000)
})

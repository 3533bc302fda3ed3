import { mkdtempSync, rmSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import BetterSqlite3 from 'better-sqlite3'
import { v7 as uuidv7 } from 'uuid'
import { afterAll, describe, expect, it } from 'vitest'
import { demoUsers } from '#db/seed'
import { pushResponseSchema, type PushResponse } from '#shared/schemas/sync'
import { type ChildServer, startChildServer } from './support/childServer'
import { mutation, type Pushed } from './support/sync'

// SYNC.md's kill test: the real server, SIGKILLed while a batch is half applied inside its transaction, then
// started again on the same file. Acknowledged batches must be there in full, the killed one wholly or not
// at all, and resending it must give each mutation exactly one effect.

const iterations = 20
const dataDir = mkdtempSync(join(tmpdir(), 'lightseam-kill-'))
const dbFile = join(dataDir, 'lightseam.sqlite')
let server: ChildServer | undefined

afterAll(async () => {
  await server?.kill()
  rmSync(dataDir, { recursive: true, force: true })
})

// A fixed generator, so a failure can be replayed; the seed is printed.
const seed = Date.now() % 1_000_000
function mulberry32(start: number) {
  let a = start >>> 0
  return () => {
    a = (a + 0x6d2b79f5) >>> 0
    let x = a
    x = Math.imul(x ^ (x >>> 15), x | 1)
    x ^= x + Math.imul(x ^ (x >>> 7), x | 61)
    return ((x ^ (x >>> 14)) >>> 0) / 4294967296
  }
}
const random = mulberry32(seed)
const between = (low: number, high: number) => low + Math.floor(random() * (high - low + 1))

interface Slot {
  closureId: string
  trayId: string
  slot: number
  cableAId: string
  fiberA: number
  cableBId: string
  fiberB: number
}

function openDb() {
  return new BetterSqlite3(dbFile)
}

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

async function pushBatch(
  url: string,
  auth: string,
  clientId: string,
  mutations: Pushed[],
): Promise<PushResponse> {
  const res = await fetch(`${url}/api/sync/push`, {
    method: 'POST',
    headers: { 'Content-Type': 'application/json', Authorization: auth },
    body: JSON.stringify({ clientId, schemaVersion: 1, mutations }),
  })
  const body = (await res.json()) as unknown
  expect(res.status, JSON.stringify(body)).toBe(200)
  return pushResponseSchema.parse(body)
}

/** What a mutation leaves behind: the record it creates, looked up by id. */
interface Effect {
  seq: number
  table: 'splices' | 'notes'
  id: string
}

describe('kill test', () => {
  it('when the server is SIGKILLed mid-batch and restarted, then acknowledged work is whole, the cut batch is all or nothing, and a resend converges', async () => {
    console.warn(`kill test seed: ${seed}`)
    const clientId = uuidv7()
    const effects: Effect[] = []
    let acknowledged = 0
    let pending: Pushed[] = []
    let slots: Slot[] = []
    let splicerId = ''
    let auth = ''
    let nextSeq = 1
    const started = Date.now()

    const makeMutation = (): Pushed => {
      const seq = nextSeq++
      if (random() < 0.7) {
        const slot = slots[between(0, slots.length - 1)]!
        const id = uuidv7()
        effects.push({ seq, table: 'splices', id })
        return mutation(seq, 'createSplice', {
          id,
          ...slot,
          method: 'single_fusion',
          lossDb: between(5, 250) / 1000,
          splicedAt: new Date().toISOString(),
          splicerId,
          clientId,
        })
      }
      const id = uuidv7()
      effects.push({ seq, table: 'notes', id })
      return mutation(seq, 'addNote', {
        id,
        entity: 'closure',
        entityId: slots[0]!.closureId,
        body: `Note ${seq}`,
      })
    }

    /** Checks the file as the killed server left it, before anything else touches it. */
    const checkAfterKill = (cut: Pushed[]) => {
      const db = openDb()
      try {
        expect(db.pragma('integrity_check', { simple: true })).toBe('ok')
        const present = (e: Effect) =>
          (db.prepare(`SELECT count(*) AS n FROM ${e.table} WHERE id = ?`).get(e.id) as { n: number }).n
        for (const e of effects.filter((e) => e.seq <= acknowledged)) expect(present(e)).toBe(1)
        const cutSeqs = new Set(cut.map((m) => m.seq))
        const found = effects.filter((e) => cutSeqs.has(e.seq)).map(present)
        const lastSeq = (
          db.prepare('SELECT last_seq FROM sync_clients WHERE client_id = ?').get(clientId) as {
            last_seq: number
          }
        ).last_seq
        // Never acknowledged, so it may be there in full or not at all — never in part.
        if (lastSeq === acknowledged) expect(found.every((n) => n === 0)).toBe(true)
        else {
          expect(lastSeq).toBe(acknowledged + cut.length)
          expect(found.every((n) => n === 1)).toBe(true)
        }
      } finally {
        db.close()
      }
    }

    for (let round = 0; round <= iterations; round += 1) {
      const last = round === iterations
      // The pause point changes each round; batches shorter than it go through untouched.
      const pauseAt = between(2, 5)
      server = await startChildServer(
        dataDir,
        last ? {} : { LIGHTSEAM_TEST_PAUSE_AFTER_MUTATION: String(pauseAt) },
      )
      if (round === 0) {
        const db = openDb()
        slots = db
          .prepare(
            `SELECT p.closure_id AS closureId, p.tray_id AS trayId, p.slot, p.cable_a_id AS cableAId, p.fiber_a AS fiberA,
                 p.cable_b_id AS cableBId, p.fiber_b AS fiberB
               FROM plan_rows p JOIN closures c ON c.id = p.closure_id WHERE c.label LIKE 'HH-02%'`,
          )
          .all() as Slot[]
        splicerId = (db.prepare("SELECT id FROM users WHERE email LIKE 'maren%'").get() as { id: string }).id
        db.close()
        auth = await signIn(server.url)
      }

      // The device resends what it never heard back about, with the same seqs (in batches the pause skips).
      for (let i = 0; i < pending.length; i += pauseAt - 1) {
        const chunk = pending.slice(i, i + pauseAt - 1)
        const body = await pushBatch(server.url, auth, clientId, chunk)
        expect(body.results.map((r) => r.status).every((s) => s === 'applied' || s === 'duplicate')).toBe(
          true,
        )
        acknowledged = body.lastSeq
      }
      if (last) break

      const batch = Array.from({ length: between(1, pauseAt - 1) }, makeMutation)
      const acked = await pushBatch(server.url, auth, clientId, batch)
      expect(acked.results.map((r) => r.status)).toEqual(batch.map(() => 'applied'))
      acknowledged = acked.lastSeq

      const cut = Array.from({ length: between(pauseAt, pauseAt + 4) }, makeMutation)
      const request = pushBatch(server.url, auth, clientId, cut).then(
        () => 'answered',
        () => 'cut',
      )
      await server.waitForOutput(new RegExp(`paused after mutation ${pauseAt} of ${cut.length}`))
      await server.kill()
      expect(await request).toBe('cut')
      checkAfterKill(cut)
      pending = cut
    }

    // Converged: every mutation has exactly one effect, the server accounts for every seq once.
    const db = openDb()
    try {
      expect(db.pragma('integrity_check', { simple: true })).toBe('ok')
      for (const e of effects) {
        expect(
          (db.prepare(`SELECT count(*) AS n FROM ${e.table} WHERE id = ?`).get(e.id) as { n: number }).n,
        ).toBe(1)
      }
      const seqs = db
        .prepare(
          "SELECT mutation_seq AS s FROM audit_log WHERE client_id = ? AND outcome = 'created' ORDER BY s",
        )
        .all(clientId) as { s: number }[]
      expect(seqs.map((r) => r.s)).toEqual(effects.map((e) => e.seq))
      expect(db.prepare('SELECT last_seq FROM sync_clients WHERE client_id = ?').get(clientId)).toEqual({
        last_seq: effects.length,
      })
      expect(
        (
          db.prepare('SELECT count(*) AS n FROM applied_mutations WHERE client_id = ?').get(clientId) as {
            n: number
          }
        ).n,
      ).toBe(effects.length)
    } finally {
      db.close()
    }
    await server?.stop()
    console.warn(
      `kill test: ${iterations} kills, ${effects.length} mutations, ${((Date.now() - started) / 1000).toFixed(1)} s`,
    )
  }, 180_000)
})

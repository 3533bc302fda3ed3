import { createServer, type Server } from 'node:http'
import type { AddressInfo } from 'node:net'
import { mkdtempSync, rmSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import bcrypt from 'bcryptjs'
import fc from 'fast-check'
import { IDBFactory, IDBKeyRange } from 'fake-indexeddb'
import { v7 as uuidv7 } from 'uuid'
import { afterAll, describe, expect, it } from 'vitest'
import { openDatabase, writeTransaction, type Database } from '#db/client'
import { runMigrations } from '#db/migrate'
import { cables, closures, crews, planRows, projects, trays, users } from '#db/schema/index'
import { defaultPhotoRules, defaultProjectLimits } from '#shared/schemas/project'
import type { Role } from '#shared/schemas/enums'
import { openDeviceDb, deviceMeta, type DeviceDb } from '@/idb/db'
import { addPhotoLink, editSplice, logSplice, reopenClosure, resplice, signOffClosure } from '@/idb/writes'
import { createSyncEngine, type SyncEngine } from '@/sync/engine'
import { createApp } from '../../server/app'
import { loadConfig, type Config } from '../../server/config'

// The model-based randomised sync test of SYNC.md: three devices (two splicers of one crew and their
// foreman) on separate fake-indexeddb factories against the real app over HTTP on 127.0.0.1, with
// offline periods, dropped requests, dropped responses, duplicated and replayed (reordered)
// deliveries, server restarts and closed tabs; then everything heals and syncs to quiet.
// Invariants: no acknowledged mutation lost, one effect per (clientId, seq), outbox seqs gapless,
// devices equal the server in their scope, every overwritten value and refused payload findable,
// cursors monotonic, and no splicer change applied to a closure while it was signed off.

const runs = Number(process.env.LIGHTSEAM_SYNC_RUNS ?? 200)
const seed = Number(process.env.LIGHTSEAM_SYNC_SEED ?? Date.now() % 2_147_483_647)
const password = 'model-test-password'
const totals = { runs: 0, operations: 0, lost: 0, duplicated: 0, rejected: 0, merged: 0 }

// ---------------------------------------------------------------------------------------------
// The world: one server (restartable on the same file) and three devices.

interface Fixture {
  users: Record<'splicerA' | 'splicerB' | 'foreman', { id: string; email: string; role: Role }>
  closures: { id: string; trays: { id: string; capacity: number }[] }[]
  plan: Map<string, { cableAId: string; fiberA: number; cableBId: string; fiberB: number }>
}

function buildFixture(database: Database): Fixture {
  const hash = bcrypt.hashSync(password, 4)
  const crewId = uuidv7()
  const now = new Date().toISOString()
  const mk = (email: string, role: Role) => ({ id: uuidv7(), email, role })
  const people = {
    splicerA: mk('a@model.test', 'splicer'),
    splicerB: mk('b@model.test', 'splicer'),
    foreman: mk('f@model.test', 'foreman'),
  }
  const projectId = uuidv7()
  const cableA = uuidv7()
  const cableB = uuidv7()
  const fixture: Fixture = { users: people, closures: [], plan: new Map() }
  writeTransaction(database.sqlite, (serverSeq) => {
    const db = database.db
    db.insert(crews).values({ id: crewId, name: 'Model crew', serverSeq }).run()
    for (const u of Object.values(people)) {
      db.insert(users)
        .values({ ...u, name: u.email, crewId, passwordHash: hash, createdAt: now, serverSeq })
        .run()
    }
    db.insert(projects)
      .values({
        id: projectId,
        code: 'MDL-01',
        name: 'Model',
        limits: defaultProjectLimits,
        photoRules: defaultPhotoRules,
        defaultMethod: 'single_fusion',
        otdrToleranceM: 20,
        disagreementDb: 0.05,
        serverSeq,
      })
      .run()
    for (const id of [cableA, cableB]) {
      db.insert(cables)
        .values({
          id,
          projectId,
          label: id === cableA ? 'MDL-A' : 'MDL-B',
          fiberCount: 24,
          construction: 'loose_tube',
          fibersPerUnit: 12,
          fiberType: 'G.652.D',
          lengthM: 500,
          serverSeq,
        })
        .run()
    }
    for (let c = 0; c < 2; c += 1) {
      const closureId = uuidv7()
      db.insert(closures)
        .values({ id: closureId, projectId, label: `MDL-C${c}`, kind: 'handhole', crewId, serverSeq })
        .run()
      const closureTrays = []
      for (let n = 1; n <= 2; n += 1) {
        const trayId = uuidv7()
        db.insert(trays).values({ id: trayId, closureId, number: n, capacity: 6, serverSeq }).run()
        closureTrays.push({ id: trayId, capacity: 6 })
        for (let slot = 1; slot <= 6; slot += 1) {
          const fiber = (n - 1) * 6 + slot
          const pair = { cableAId: cableA, fiberA: fiber, cableBId: cableB, fiberB: fiber }
          db.insert(planRows)
            .values({ id: uuidv7(), closureId, trayId, slot, ...pair, serverSeq })
            .run()
          fixture.plan.set(`${trayId}#${slot}`, pair)
        }
      }
      fixture.closures.push({ id: closureId, trays: closureTrays })
    }
  })
  return fixture
}

class World {
  database!: Database
  server!: Server
  url!: string
  config: Config
  dir: string
  fixture: Fixture
  restarts = 0

  constructor() {
    this.dir = mkdtempSync(join(tmpdir(), 'lightseam-model-'))
    this.config = loadConfig(
      { NODE_ENV: 'test', LIGHTSEAM_DATA_DIR: this.dir, LIGHTSEAM_BCRYPT_COST: '4' },
      {
        jwtSecret: new TextEncoder().encode('model-test-secret-model-test-secret-0123'),
        staticDir: join(this.dir, 'no-dist'),
        signInLimits: { windowMs: 60_000, perAccount: 10_000, perAddress: 10_000 },
      },
    )
    this.open()
    runMigrations(this.database.db)
    this.fixture = buildFixture(this.database)
  }

  private open(): void {
    this.database = openDatabase(this.config.dbFile)
  }

  async listen(port = 0): Promise<void> {
    const app = createApp({ config: this.config, database: this.database, version: 'model' })
    this.server = createServer(app)
    await new Promise<void>((resolve) => this.server.listen(port, '127.0.0.1', resolve))
    this.url = `http://127.0.0.1:${(this.server.address() as AddressInfo).port}`
  }

  /** Stops the server and the database, then starts both again on the same file and port. */
  async restart(): Promise<void> {
    const port = (this.server.address() as AddressInfo).port
    this.server.closeAllConnections()
    await new Promise((resolve) => this.server.close(resolve))
    this.database.sqlite.close()
    this.open()
    runMigrations(this.database.db)
    await this.listen(port)
    this.restarts += 1
  }

  async close(): Promise<void> {
    this.server.closeAllConnections()
    await new Promise((resolve) => this.server.close(resolve))
    this.database.sqlite.close()
    rmSync(this.dir, { recursive: true, force: true })
  }
}

type Fault = 'dropRequest' | 'dropResponse' | 'duplicate'

class Device {
  db!: DeviceDb
  engine!: SyncEngine
  readonly factory = new IDBFactory()
  offline = false
  faults: Fault[] = []
  lastPush: { url: string; init: RequestInit } | null = null
  cursors: number[] = []
  private token: string | null = null
  private cookie = ''

  constructor(
    readonly name: keyof Fixture['users'],
    readonly world: World,
  ) {}

  get user() {
    return this.world.fixture.users[this.name]
  }

  async signIn(): Promise<void> {
    const res = await fetch(`${this.world.url}/api/auth/sign-in`, {
      method: 'POST',
      headers: { 'Content-Type': 'application/json' },
      body: JSON.stringify({ email: this.user.email, password }),
    })
    if (res.status !== 200) throw new Error(`sign-in ${this.name}: ${res.status}`)
    this.token = ((await res.json()) as { accessToken: string }).accessToken
    this.cookie = (res.headers.get('set-cookie') ?? '').split(';')[0]!
  }

  private async refresh(): Promise<string | null> {
    const res = await fetch(`${this.world.url}/api/auth/refresh`, {
      method: 'POST',
      headers: { Cookie: this.cookie },
    })
    if (res.status !== 200) return null
    this.token = ((await res.json()) as { accessToken: string }).accessToken
    this.cookie = (res.headers.get('set-cookie') ?? '').split(';')[0]!
    return this.token
  }

  /** The device's network: offline periods and injected faults sit between the engine and the server. */
  private net = async (path: string, init: RequestInit): Promise<Response> => {
    if (this.offline) throw new TypeError('fetch failed: offline')
    const url = `${this.world.url}${path}`
    const fault = this.faults.shift()
    if (path.startsWith('/api/sync/push')) this.lastPush = { url: path, init }
    if (fault === 'dropRequest') throw new TypeError('fetch failed: request lost')
    const res = await fetch(url, init)
    if (fault === 'dropResponse') {
      await res.arrayBuffer()
      throw new TypeError('fetch failed: response lost')
    }
    if (fault === 'duplicate') {
      const again = await fetch(url, init)
      return again
    }
    return res
  }

  async openTab(): Promise<void> {
    this.db = await openDeviceDb(this.user.id, { indexedDB: this.factory, IDBKeyRange })
    this.engine = createSyncEngine({
      db: this.db,
      baseUrl: '',
      fetch: this.net,
      getAccessToken: () => this.token,
      refreshAccessToken: () => this.refresh(),
      locks: null,
      onlineTarget: null,
      visibilityTarget: null,
      requestTimeoutMs: 10_000,
      random: () => 0.5,
    })
  }

  async closeTab(): Promise<void> {
    await this.engine.stop()
    this.db.close()
  }

  async sync(): Promise<void> {
    await this.engine.syncNow()
    this.cursors.push((await deviceMeta(this.db)).cursor)
  }

  /** Sends the last push body again, as a late duplicate the network delivered out of order. */
  async replay(): Promise<void> {
    if (!this.lastPush || this.offline) return
    const init = {
      ...this.lastPush.init,
      headers: { ...(this.lastPush.init.headers as object), Authorization: `Bearer ${this.token}` },
    }
    // A late copy that fails to arrive is just another lost delivery.
    await fetch(`${this.world.url}${this.lastPush.url}`, init)
      .then((r) => r.arrayBuffer())
      .catch(() => undefined)
  }
}

// ---------------------------------------------------------------------------------------------
// Commands

interface Model {
  ops: number
}
interface Real {
  world: World
  devices: Device[]
}

const deviceArb = fc.integer({ min: 0, max: 2 })
const lossArb = fc.integer({ min: -20, max: 400 }).map((m) => m / 1000)

const closureIdOf = (r: Real, c: number) => r.world.fixture.closures[c % r.world.fixture.closures.length]!.id

async function currentOwnSplices(d: Device) {
  const rows = await d.db.splices.toArray()
  return rows.filter((s) => !s.deleted && s.isCurrent && s.splicerId === d.user.id)
}

function command(label: string, run: (r: Real) => Promise<void>): fc.AsyncCommand<Model, Real> {
  return {
    check: () => true,
    async run(m, r) {
      m.ops += 1
      await run(r)
    },
    toString: () => label,
  }
}

const commands = [
  fc
    .tuple(
      deviceArb,
      fc.integer({ min: 0, max: 1 }),
      fc.integer({ min: 0, max: 1 }),
      fc.integer({ min: 1, max: 6 }),
      lossArb,
    )
    .map(([d, c, t, slot, loss]) =>
      command(`log(${d},${c},${t},${slot},${loss})`, async (r) => {
        const device = r.devices[d]!
        if (device.name === 'foreman') return
        const closure = r.world.fixture.closures[c]!
        const tray = closure.trays[t]!
        const pair = r.world.fixture.plan.get(`${tray.id}#${slot}`)!
        const meta = await deviceMeta(device.db)
        await logSplice(device.db, {
          id: uuidv7(),
          closureId: closure.id,
          trayId: tray.id,
          slot,
          ...pair,
          method: 'single_fusion',
          lossDb: loss,
          splicedAt: new Date().toISOString(),
          splicerId: device.user.id,
          clientId: meta.clientId,
        })
      }),
    ),
  fc.tuple(deviceArb, fc.nat(), lossArb).map(([d, pick, loss]) =>
    command(`resplice(${d},${pick})`, async (r) => {
      const device = r.devices[d]!
      const own = await currentOwnSplices(device)
      const old = own[pick % Math.max(1, own.length)]
      if (!old) return
      const meta = await deviceMeta(device.db)
      await resplice(device.db, {
        id: uuidv7(),
        closureId: old.closureId,
        trayId: old.trayId,
        slot: old.slot,
        cableAId: old.cableAId,
        fiberA: old.fiberA,
        cableBId: old.cableBId,
        fiberB: old.fiberB,
        method: old.method,
        lossDb: loss,
        attempt: old.attempt + 1,
        supersedesId: old.id,
        respliceReason: 'high_loss',
        splicedAt: new Date().toISOString(),
        splicerId: device.user.id,
        clientId: meta.clientId,
      })
    }),
  ),
  fc.tuple(deviceArb, fc.nat(), fc.string({ minLength: 1, maxLength: 12 })).map(([d, pick, text]) =>
    command(`edit(${d},${pick})`, async (r) => {
      const device = r.devices[d]!
      const rows = (await device.db.splices.toArray()).filter((s) => !s.deleted && s.isCurrent)
      const row = rows[pick % Math.max(1, rows.length)]
      if (!row) return
      await editSplice(device.db, row.id, { notes: `${device.name}: ${text}` })
    }),
  ),
  // Two people edit one splice's note from the same starting point; the foreman's value must win and
  // the splicer's device must be told its value was replaced.
  fc.tuple(fc.integer({ min: 0, max: 1 }), fc.nat()).map(([d, pick]) =>
    command(`contest(${d},${pick})`, async (r) => {
      const splicer = r.devices[d]!
      const foreman = r.devices[2]!
      await splicer.sync()
      await foreman.sync()
      const seen = new Set(
        (await foreman.db.splices.toArray()).filter((s) => !s.deleted && s.isCurrent).map((s) => s.id),
      )
      const rows = (await currentOwnSplices(splicer)).filter((s) => seen.has(s.id))
      const row = rows[pick % Math.max(1, rows.length)]
      if (!row) return
      await editSplice(splicer.db, row.id, { notes: `splicer says ${pick}` })
      await editSplice(foreman.db, row.id, { notes: `foreman says ${pick}` })
      await foreman.sync()
      await splicer.sync()
    }),
  ),
  fc.tuple(deviceArb, fc.nat()).map(([d, pick]) =>
    command(`photo(${d},${pick})`, async (r) => {
      const device = r.devices[d]!
      const rows = (await device.db.splices.toArray()).filter((s) => !s.deleted && s.isCurrent)
      const row = rows[pick % Math.max(1, rows.length)]
      if (!row) return
      const bytes = new Uint8Array([
        0xff,
        0xd8,
        0xff,
        0xe0,
        ...Array.from({ length: 60 }, (_, i) => (pick * 7 + i) % 256),
      ])
      await addPhotoLink(
        device.db,
        { id: uuidv7(), entity: 'splice', entityId: row.id },
        { bytes: bytes.buffer, type: 'image/jpeg', name: 'tray.jpg' },
      )
    }),
  ),
  fc.integer({ min: 0, max: 1 }).map((c) =>
    command(`signOff(${c})`, async (r) => {
      const foreman = r.devices[2]!
      const closure = await foreman.db.closures.get(closureIdOf(r, c))
      if (!closure || closure.state === 'signed_off') return
      await signOffClosure(foreman.db, { closureId: closure.id, note: '' })
    }),
  ),
  fc.integer({ min: 0, max: 1 }).map((c) =>
    command(`reopen(${c})`, async (r) => {
      const foreman = r.devices[2]!
      const closure = await foreman.db.closures.get(closureIdOf(r, c))
      if (!closure || closure.state !== 'signed_off') return
      await reopenClosure(foreman.db, { closureId: closure.id, reason: 'one more slot to redo' })
    }),
  ),
  deviceArb.map((d) => command(`sync(${d})`, (r) => r.devices[d]!.sync())),
  deviceArb.map((d) => command(`offline(${d})`, async (r) => void (r.devices[d]!.offline = true))),
  deviceArb.map((d) => command(`online(${d})`, async (r) => void (r.devices[d]!.offline = false))),
  fc
    .tuple(deviceArb, fc.constantFrom<Fault>('dropRequest', 'dropResponse', 'duplicate'))
    .map(([d, fault]) => command(`${fault}(${d})`, async (r) => void r.devices[d]!.faults.push(fault))),
  deviceArb.map((d) => command(`replay(${d})`, (r) => r.devices[d]!.replay())),
  fc.constant(command('restartServer', (r) => r.world.restart())),
  deviceArb.map((d) =>
    command(`closeTab(${d})`, async (r) => {
      const device = r.devices[d]!
      await device.closeTab()
      await device.openTab()
    }),
  ),
]

// ---------------------------------------------------------------------------------------------
// Heal and check

async function healAndSync(r: Real): Promise<void> {
  for (const d of r.devices) {
    d.offline = false
    d.faults = []
  }
  for (let round = 0; round < 6; round += 1) {
    for (const d of r.devices) await d.sync()
    const queued = await Promise.all(r.devices.map((d) => d.db.outbox.count()))
    if (queued.every((n) => n === 0)) break
  }
  // One more pull each, so every device has seen the others' last pushes.
  for (const d of r.devices) await d.sync()
}

const comparable = (s: Record<string, unknown>) => ({
  id: s.id,
  lossDb: s.lossDb,
  notes: s.notes,
  isCurrent: Boolean(s.isCurrent),
  deleted: Boolean(s.deleted),
  attempt: s.attempt,
  supersedesId: s.supersedesId ?? null,
})

async function checkInvariants(r: Real): Promise<void> {
  const sqlite = r.world.database.sqlite
  const q = <T>(sql: string, ...params: unknown[]) => sqlite.prepare(sql).all(...params) as T[]
  expect(q<{ integrity_check: string }>('PRAGMA integrity_check')[0]!.integrity_check).toBe('ok')
  const serverSplices = q<Record<string, unknown>>(
    `SELECT id, loss_db AS lossDb, notes, is_current AS isCurrent, deleted, attempt, supersedes_id AS supersedesId
     FROM splices`,
  ).map(comparable)

  for (const d of r.devices) {
    const meta = await deviceMeta(d.db)
    // Outbox drained; every seq the device allocated answered exactly once.
    expect(await d.db.outbox.count(), `${d.name} outbox`).toBe(0)
    const client = q<{ last_seq: number; user_id: string }>(
      'SELECT last_seq, user_id FROM sync_clients WHERE client_id = ?',
      meta.clientId,
    )[0]
    const allocated = meta.nextSeq - 1
    if (allocated === 0) continue
    expect(client?.user_id).toBe(d.user.id)
    expect(client?.last_seq, `${d.name} last_seq`).toBe(allocated)
    const answered = q<{ seq: number; result: string }>(
      'SELECT seq, result FROM applied_mutations WHERE client_id = ? ORDER BY seq',
      meta.clientId,
    )
    expect(answered.map((a) => a.seq)).toEqual(Array.from({ length: allocated }, (_, i) => i + 1))

    // Every created splice whose mutation was applied is on the server exactly once; refused ones are
    // quarantined on both sides with the same seqs.
    const results = answered.map((a) => ({
      seq: a.seq,
      ...(JSON.parse(a.result) as { status: string; overwritten?: unknown[] }),
    }))
    const rejectedSeqs = results.filter((x) => x.status === 'rejected').map((x) => x.seq)
    totals.rejected += rejectedSeqs.length
    totals.merged += results.filter((x) => x.status === 'merged').length
    const quarantined = q<{ seq: number }>(
      'SELECT seq FROM rejected_mutations WHERE client_id = ? ORDER BY seq',
      meta.clientId,
    ).map((x) => x.seq)
    expect(quarantined, `${d.name} quarantined on server`).toEqual(rejectedSeqs)
    expect(
      (await d.db.rejected.toArray()).map((x) => x.seq).sort((a, b) => a - b),
      `${d.name} quarantined on device`,
    ).toEqual(rejectedSeqs)

    const applied = q<{ seq: number; name: string; result: string }>(
      "SELECT seq, name, result FROM applied_mutations WHERE client_id = ? AND name IN ('createSplice', 'resplice')",
      meta.clientId,
    ).filter((a) => (JSON.parse(a.result) as { status: string }).status !== 'rejected')
    const sent = await d.db.table('outbox').count()
    expect(sent).toBe(0)
    for (const a of applied) {
      const audit = q<{ entity_id: string }>(
        "SELECT entity_id FROM audit_log WHERE client_id = ? AND mutation_seq = ? AND entity = 'splice' AND outcome = 'created'",
        meta.clientId,
        a.seq,
      )
      if (audit.length !== 1) totals.lost += 1
      expect(audit, `${d.name} seq ${a.seq} created once`).toHaveLength(1)
      const rows = q<{ n: number }>('SELECT count(*) AS n FROM splices WHERE id = ?', audit[0]!.entity_id)[0]!
        .n
      if (rows > 1) totals.duplicated += rows - 1
      expect(rows).toBe(1)
    }

    // The device can tell its user which of their values were replaced, and by whom.
    const mergedSeqs = results.filter((x) => x.status === 'merged').map((x) => x.seq)
    const told = (await d.db.table('overwritten').toArray()) as {
      seq: number
      overwritten: { byName: string | null }[]
    }[]
    expect(
      told.map((x) => x.seq).sort((a, b) => a - b),
      `${d.name} told of replaced values`,
    ).toEqual(mergedSeqs)
    for (const x of told) expect(x.overwritten.every((o) => o.byName !== null)).toBe(true)

    // Every overwritten value is in the audit trail.
    for (const x of results.filter((x) => x.status === 'merged')) {
      const lost = q<{ n: number }>(
        "SELECT count(*) AS n FROM audit_log WHERE client_id = ? AND mutation_seq = ? AND outcome = 'conflict_lost'",
        meta.clientId,
        x.seq,
      )[0]!.n
      expect(lost, `${d.name} seq ${x.seq} overwritten values audited`).toBeGreaterThan(0)
    }

    // The device mirrors the server (all three see the whole crew's closures).
    const local = (await d.db.splices.toArray()).map((s) =>
      comparable(s as unknown as Record<string, unknown>),
    )
    const byId = (rows: ReturnType<typeof comparable>[]) =>
      [...rows].sort((x, y) => String(x.id).localeCompare(String(y.id)))
    expect(byId(local), `${d.name} equals the server`).toEqual(byId(serverSplices))

    // Cursors never moved back.
    for (let i = 1; i < d.cursors.length; i += 1)
      expect(d.cursors[i]!).toBeGreaterThanOrEqual(d.cursors[i - 1]!)
  }

  // No splicer change was applied while its closure was signed off: every splice written by a splicer
  // carries a change sequence outside the closure's signed-off periods (read from the audit trail).
  const periods = q<{ entity_id: string; new_value: string; id: number }>(
    "SELECT entity_id, new_value, id FROM audit_log WHERE entity = 'closure' AND field = 'state' ORDER BY id",
  )
  const splicerWrites = q<{ closure_id: string; audit_id: number }>(
    `SELECT s.closure_id, a.id AS audit_id FROM audit_log a JOIN splices s ON s.id = a.entity_id
     JOIN users u ON u.id = a.user_id
     WHERE a.entity = 'splice' AND a.outcome IN ('created', 'applied', 'merged') AND u.role = 'splicer'`,
  )
  for (const w of splicerWrites) {
    const before = periods.filter((p) => p.entity_id === w.closure_id && p.id < w.audit_id).at(-1)
    expect(
      before ? JSON.parse(before.new_value) : 'planned',
      'splicer write into a signed-off closure',
    ).not.toBe('signed_off')
  }
}

// ---------------------------------------------------------------------------------------------

describe('sync, model-based (SYNC.md)', () => {
  afterAll(() => {
    console.warn(
      `sync model: seed=${seed} runs=${totals.runs} operations=${totals.operations} lost=${totals.lost} duplicated=${totals.duplicated} (rejected=${totals.rejected}, merged=${totals.merged})`,
    )
  })

  it(
    `when three devices work through faults, restarts and closed tabs, then nothing is lost or applied twice (${runs} runs)`,
    async () => {
      await fc.assert(
        fc.asyncProperty(fc.commands(commands, { maxCommands: 40, size: 'large' }), async (cmds) => {
          const world = new World()
          await world.listen()
          const devices = (['splicerA', 'splicerB', 'foreman'] as const).map(
            (name) => new Device(name, world),
          )
          try {
            for (const d of devices) {
              await d.signIn()
              await d.openTab()
              await d.sync()
            }
            const model: Model = { ops: 0 }
            await fc.asyncModelRun(() => ({ model, real: { world, devices } }), cmds)
            await healAndSync({ world, devices })
            await checkInvariants({ world, devices })
            totals.runs += 1
            totals.operations += model.ops
          } finally {
            for (const d of devices) await d.closeTab().catch(() => undefined)
            await world.close()
          }
        }),
        { numRuns: runs, seed, verbose: 1 },
      )
    },
    30 * 60_000,
  )
})

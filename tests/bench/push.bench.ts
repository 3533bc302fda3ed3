// Push throughput through the real API against raw better-sqlite3 inserts of the same rows, and one pull of
// 1,000 changes. Run with `npx tsx tests/bench/push.bench.ts`; importing the file only defines main().
import { mkdtempSync, rmSync } from 'node:fs'
import { Agent, request } from 'node:http'
import type { AddressInfo } from 'node:net'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { performance } from 'node:perf_hooks'
import { pathToFileURL } from 'node:url'
import cookieParser from 'cookie-parser'
import express, { type Express } from 'express'
import { pino } from 'pino'
import { v7 } from 'uuid'
import {
  type Database,
  dropHeldServerSeq,
  holdServerSeq,
  nextServerSeq,
  openDatabase,
  writeHeldServerSeq,
  writeTransaction,
} from '#db/client'
import { runMigrations } from '#db/migrate'
import { cables, closures, planRows, trays } from '#db/schema/index'
import { demoUsers, seedDemo } from '#db/seed'
import {
  maxMutationsPerPush,
  pullResponseSchema,
  pushBodySchema,
  pushResponseSchema,
} from '#shared/schemas/sync'
import { createApp } from '../../server/app'
import { loadConfig } from '../../server/config'
import type { AppContext } from '../../server/context'
import { authorize } from '../../server/middleware/auth'
import { ruleFor } from '../../server/policy'
import { createLogger } from '../../server/middleware/logging'
import { recomputeProjectTotals } from '../../server/repositories/splices'
import type { BenchFigure } from './board.bench'

const spliceCount = 10_000
// Timed repeats, each on fresh databases; the median one is reported, as single runs swing ±30 % on a busy host.
const repeats = 3
// An untimed push first, so the first timed one does not also pay for compiling the hot path.
const warmUpSplices = 1_000
const closureCount = 50
const traysPerClosure = 10
const slotsPerTray = 24

interface World {
  projectId: string
  splicerId: string
  cableA: string
  cableB: string
  closures: Array<{ id: string; trays: string[] }>
  /** Every planned slot of the bench closures, in push order. */
  slots: Array<{ closureId: string; trayId: string; slot: number; fiber: number }>
}

/** The bench closures' ids: 50 closures of 10 trays × 24 planned slots, the same in both databases. */
export function layout(): Pick<World, 'cableA' | 'cableB' | 'closures' | 'slots'> {
  const closureList = Array.from({ length: closureCount }, () => ({
    id: v7(),
    trays: Array.from({ length: traysPerClosure }, () => v7()),
  }))
  const slots = closureList.flatMap((closure) =>
    closure.trays.flatMap((trayId, t) =>
      Array.from({ length: slotsPerTray }, (_, i) => ({
        closureId: closure.id,
        trayId,
        slot: i + 1,
        fiber: t * slotsPerTray + i + 1,
      })),
    ),
  )
  return { cableA: v7(), cableB: v7(), closures: closureList, slots }
}

/** A seeded demo database plus the bench closures, given to the demo splicer's crew. */
export function build(
  dir: string,
  name: string,
  shape: ReturnType<typeof layout>,
): { database: Database; world: World } {
  const database = openDatabase(join(dir, `${name}.sqlite`))
  runMigrations(database.db)
  seedDemo(database.db, { bcryptCost: 4 })
  const { sqlite } = database
  const projectId = sqlite.prepare('SELECT id FROM projects').pluck().get() as string
  const splicer = demoUsers.find((u) => u.key === 'splicer')!
  const user = sqlite.prepare('SELECT id, crew_id FROM users WHERE email = ?').get(splicer.email) as {
    id: string
    crew_id: string
  }
  writeTransaction(sqlite, (serverSeq) => {
    const db = database.db
    for (const [id, label] of [
      [shape.cableA, 'BN-288 bench feeder'],
      [shape.cableB, 'BN-288 bench distribution'],
    ] as const) {
      db.insert(cables)
        .values({
          id,
          projectId,
          label,
          fiberCount: 288,
          construction: 'loose_tube',
          fibersPerUnit: 12,
          fiberType: 'G.652.D',
          lengthM: 900,
          serverSeq,
        })
        .run()
    }
    shape.closures.forEach((closure, c) => {
      db.insert(closures)
        .values({
          id: closure.id,
          projectId,
          label: `BN-${String(c).padStart(3, '0')}`,
          kind: 'handhole',
          crewId: user.crew_id,
          state: 'in_progress',
          serverSeq,
        })
        .run()
      closure.trays.forEach((trayId, t) => {
        db.insert(trays)
          .values({ id: trayId, closureId: closure.id, number: t + 1, capacity: slotsPerTray, serverSeq })
          .run()
      })
    })
    for (const slot of shape.slots) {
      db.insert(planRows)
        .values({
          id: v7(),
          closureId: slot.closureId,
          trayId: slot.trayId,
          slot: slot.slot,
          cableAId: shape.cableA,
          fiberA: slot.fiber,
          cableBId: shape.cableB,
          fiberB: slot.fiber,
          serverSeq,
        })
        .run()
    }
    const limits = JSON.parse(
      sqlite.prepare('SELECT limits FROM projects WHERE id = ?').pluck().get(projectId) as string,
    )
    recomputeProjectTotals(db, projectId, limits)
  })
  return { database, world: { ...shape, projectId, splicerId: user.id } }
}

export function spliceArgsFor(world: World, clientId: string, n: number) {
  const perClosure = spliceCount / closureCount
  const closure = Math.floor(n / perClosure)
  const slot = world.slots[closure * traysPerClosure * slotsPerTray + (n % perClosure)]!
  return {
    id: v7(),
    closureId: slot.closureId,
    trayId: slot.trayId,
    slot: slot.slot,
    cableAId: world.cableA,
    fiberA: slot.fiber,
    cableBId: world.cableB,
    fiberB: slot.fiber,
    method: 'single_fusion',
    lossDb: Math.round(10 + ((n * 37) % 140)) / 1000,
    splicedAt: new Date(Date.UTC(2025, 5, 11, 7) + n * 60_000).toISOString(),
    splicerId: world.splicerId,
    clientId,
  }
}

/** The splices table's columns, in the order every raw insert here names them. */
const spliceColumns = `id, closure_id, tray_id, slot, cable_a_id, fiber_a, cable_b_id, fiber_b, method, loss_db,
  attempt, resplice_reason, resplice_note, supersedes_id, accept_reason, notes, spliced_at, splicer_id, client_id,
  is_current, flags, review_state, created_at, server_seq, deleted`

/**
 * Inserts the splices the API stored, as stored, with one prepared statement: in one transaction
 * (`batch` = all rows), or committing every `batch` rows as a push batch does (same durability).
 */
function rawInsert(database: Database, rows: Record<string, unknown>[], batch = rows.length): number {
  const insertAll = rawSpliceInsert(database)
  const started = performance.now()
  for (let i = 0; i < rows.length; i += batch) insertAll(rows.slice(i, i + batch))
  return performance.now() - started
}

/** One commit of splice rows, as stored, with one prepared statement. */
function rawSpliceInsert(database: Database): (rows: Record<string, unknown>[]) => void {
  const insert = database.sqlite.prepare(
    `INSERT INTO splices (${spliceColumns})
     VALUES (@id, @closure_id, @tray_id, @slot, @cable_a_id, @fiber_a, @cable_b_id, @fiber_b, @method, @loss_db,
       @attempt, @resplice_reason, @resplice_note, @supersedes_id, @accept_reason, @notes, @spliced_at, @splicer_id,
       @client_id, @is_current, @flags, @review_state, @created_at, @server_seq, @deleted)`,
  )
  const insertAll = database.sqlite.transaction((part: Record<string, unknown>[]) => {
    for (const row of part) insert.run(row)
  })
  return (rows) => insertAll.immediate(rows)
}

/**
 * Inserts every row the push stored — the splices, their audit rows and the stored answers, as stored — with
 * one prepared statement per table, committing each push batch's rows together: the storage work of a push
 * without anything the API decides, checks or derives (no reads, no savepoints, no totals, no HTTP).
 */
function rawInsertStored(database: Database, stored: StoredRows, batch: number): number {
  const { sqlite } = database
  const spliceInsert = sqlite.prepare(
    `INSERT INTO splices (${spliceColumns})
     VALUES (@id, @closure_id, @tray_id, @slot, @cable_a_id, @fiber_a, @cable_b_id, @fiber_b, @method, @loss_db,
       @attempt, @resplice_reason, @resplice_note, @supersedes_id, @accept_reason, @notes, @spliced_at, @splicer_id,
       @client_id, @is_current, @flags, @review_state, @created_at, @server_seq, @deleted)`,
  )
  const auditInsert = sqlite.prepare(
    `INSERT INTO audit_log (at, user_id, client_id, entity, entity_id, field, old_value, new_value, outcome, mutation_seq)
     VALUES (@at, @user_id, @client_id, @entity, @entity_id, @field, @old_value, @new_value, @outcome, @mutation_seq)`,
  )
  const answerInsert = sqlite.prepare(
    `INSERT INTO applied_mutations (client_id, seq, name, result, applied_at)
     VALUES (@client_id, @seq, @name, @result, @applied_at)`,
  )
  const clientInsert = sqlite.prepare(
    `INSERT INTO sync_clients (client_id, user_id, last_seq, created_at, last_seen_at)
     VALUES (@client_id, @user_id, @last_seq, @created_at, @last_seen_at)`,
  )
  const insertPart = sqlite.transaction((from: number, to: number) => {
    for (let i = from; i < to; i += 1) {
      spliceInsert.run(stored.splices[i]!)
      for (const row of stored.auditBySeq.get(i + 1) ?? []) auditInsert.run(row)
      answerInsert.run(stored.answers[i]!)
    }
  })
  const started = performance.now()
  sqlite.transaction(() => clientInsert.run(stored.client)).immediate()
  for (let i = 0; i < stored.splices.length; i += batch)
    insertPart.immediate(i, Math.min(i + batch, stored.splices.length))
  return performance.now() - started
}

const transportFloorPath = '/bench/transport-floor'

/**
 * The push's transport alone, for comparison: a route on the same app, behind the same request log, security
 * headers, 1 MiB JSON parser, cookie parser and sign-in check as POST /api/sync/push, that reads the same body
 * with the same envelope schema and, in one BEGIN IMMEDIATE transaction, inserts each mutation's splice row as
 * the baseline does, each with its own change sequence value, answering `applied` for each. None of SYNC.md's
 * work per mutation: no args schema, rights, plan or conflict checks, totals, audit rows, stored answers or
 * device seq. What this costs over the baseline is what HTTP, Express and the envelope take before any of it.
 */
function addTransportFloor(app: Express, database: Database): void {
  const ctx = app.locals.ctx as AppContext
  const { sqlite } = database
  const insert = sqlite.prepare(
    `INSERT INTO splices (${spliceColumns}) VALUES (@id, @closureId, @trayId, @slot, @cableAId, @fiberA, @cableBId,
       @fiberB, @method, @lossDb, 1, NULL, NULL, NULL, NULL, '', @splicedAt, @splicerId, @clientId, 1, '[]', NULL,
       @createdAt, @serverSeq, 0)`,
  )
  const store = sqlite.transaction((input: ReturnType<typeof pushBodySchema.parse>, at: string) => {
    holdServerSeq(sqlite)
    const results = input.mutations.map((mutation) => {
      insert.run({ ...mutation.args, createdAt: at, serverSeq: nextServerSeq(sqlite) })
      return { seq: mutation.seq, status: 'applied' as const }
    })
    writeHeldServerSeq(sqlite)
    return { results, lastSeq: input.mutations.at(-1)!.seq }
  })
  app.post(
    transportFloorPath,
    express.json({ limit: '1mb', strict: true }),
    cookieParser(),
    authorize(ctx, ruleFor('POST /api/sync/push')!),
    (req, res) => {
      const input = pushBodySchema.parse(req.body)
      try {
        res.json(store.immediate(input, new Date().toISOString()))
      } finally {
        dropHeldServerSeq(sqlite)
      }
    },
  )
}

/** What one push run left in its database, row for row. */
interface StoredRows {
  splices: Record<string, unknown>[]
  /** Audit rows by the seq of the mutation that wrote them. */
  auditBySeq: Map<number, Record<string, unknown>[]>
  answers: Record<string, unknown>[]
  client: Record<string, unknown>
}

interface PushRun {
  pushMs: number
  /**
   * The baseline, taken between the push requests: after each batch the API stored, its splice rows go raw
   * into the `interleaved` database in one commit, so both figures see the same moment of a busy host.
   */
  interleavedRawMs: number
  pullMs: number
  /** The rows as the API stored them, for the raw inserts. */
  stored: StoredRows
}

/** How the bench sends a push: node:http on one kept-alive socket (the default), or fetch(). */
type PushClient = 'http' | 'fetch'

/**
 * POSTs JSON bodies to one path on one kept-alive loopback socket and answers with the status and the text of
 * the response. node:http costs the client far less per request than fetch() (undici) on Node 20, whose own
 * work would otherwise be counted as the server's (both are printed).
 */
function httpPoster(base: string) {
  const agent = new Agent({ keepAlive: true, maxSockets: 1 })
  const post = (path: string, body: string, headers: Record<string, string>) =>
    new Promise<{ status: number; text: string }>((resolve, reject) => {
      const req = request(
        `${base}${path}`,
        {
          method: 'POST',
          agent,
          headers: {
            ...headers,
            'Content-Type': 'application/json',
            'Content-Length': Buffer.byteLength(body),
          },
        },
        (res) => {
          let text = ''
          res.setEncoding('utf8')
          res.on('data', (chunk: string) => (text += chunk))
          res.on('end', () => resolve({ status: res.statusCode ?? 0, text }))
          res.on('error', reject)
        },
      )
      req.on('error', reject)
      req.end(body)
    })
  return { post, close: () => agent.destroy() }
}

/** Starts the app on a fresh seeded database, pushes 10,000 splices over HTTP, then pulls 1,000 changes. */
async function pushThroughApi(
  dir: string,
  name: string,
  shape: ReturnType<typeof layout>,
  options: {
    splices?: number
    tempStoreDefault?: boolean
    interleaved?: Database
    /** Make the middle mutation of every batch one the server refuses (a slot the tray does not have). */
    refuseOnePerBatch?: boolean
    client?: PushClient
    /** Push to the transport floor route (see addTransportFloor) instead of POST /api/sync/push. */
    transportFloor?: boolean
  } = {},
) {
  const count = options.splices ?? spliceCount
  const api = build(dir, name, shape)
  // openDatabase sets temp_store = MEMORY; this puts SQLite's default back to show what that setting is worth.
  if (options.tempStoreDefault) api.database.sqlite.pragma('temp_store = DEFAULT')
  const config = loadConfig(
    {
      NODE_ENV: 'production',
      LIGHTSEAM_DATA_DIR: join(dir, name),
      LIGHTSEAM_STATIC_DIR: join(dir, 'no-dist'),
    },
    { jwtSecret: new TextEncoder().encode('bench-secret-bench-secret-bench-secret-0123') },
  )
  // The request log is written as in production (one line a request, synchronously), to a file instead of the
  // bench's own output.
  const logger = createLogger(
    config.logLevel,
    pino.destination({ dest: join(dir, `${name}.log`), sync: true }),
  )
  const app = createApp({ config, database: api.database, version: 'bench', logger })
  if (options.transportFloor) addTransportFloor(app, api.database)
  const pushPath = options.transportFloor ? transportFloorPath : '/api/sync/push'
  const server = app.listen(0, '127.0.0.1')
  await new Promise((resolve) => server.once('listening', resolve))
  const base = `http://127.0.0.1:${(server.address() as AddressInfo).port}`
  const poster = httpPoster(base)
  try {
    const splicer = demoUsers.find((u) => u.key === 'splicer')!
    const signIn = await fetch(`${base}/api/auth/sign-in`, {
      method: 'POST',
      headers: { 'Content-Type': 'application/json' },
      body: JSON.stringify({ email: splicer.email, password: splicer.password }),
    })
    const auth = `Bearer ${((await signIn.json()) as { accessToken: string }).accessToken}`
    const clientId = v7()
    const headSeq = api.database.sqlite.prepare('SELECT value FROM change_seq').pluck().get() as number
    // Bodies are made before the clock starts: the figure is the server's, plus loopback HTTP.
    const bodies: string[] = []
    for (let b = 0; b < count / maxMutationsPerPush; b += 1) {
      const mutations = Array.from({ length: maxMutationsPerPush }, (_, i) => {
        const n = b * maxMutationsPerPush + i
        return {
          seq: n + 1,
          name: 'createSplice',
          args: {
            ...spliceArgsFor(api.world, clientId, n),
            ...(options.refuseOnePerBatch && i === maxMutationsPerPush / 2 ? { slot: slotsPerTray + 1 } : {}),
          },
          baseServerSeq: headSeq,
          clientTime: new Date().toISOString(),
        }
      })
      bodies.push(JSON.stringify({ clientId, schemaVersion: 1, mutations }))
    }
    const batchRows = api.database.sqlite.prepare(
      'SELECT * FROM splices WHERE client_id = ? AND server_seq > ? ORDER BY server_seq',
    )
    const rawBatch = options.interleaved ? rawSpliceInsert(options.interleaved) : undefined
    let pushMs = 0
    let interleavedRawMs = 0
    let seen = headSeq
    // Both clients keep the connection alive between requests; the clock stops once the answer is parsed.
    const push = async (body: string): Promise<{ status: number; answer: unknown }> => {
      if (options.client !== 'fetch') {
        const res = await poster.post(pushPath, body, { Authorization: auth })
        return { status: res.status, answer: JSON.parse(res.text) }
      }
      const res = await fetch(`${base}${pushPath}`, {
        method: 'POST',
        headers: { 'Content-Type': 'application/json', Authorization: auth },
        body,
      })
      return { status: res.status, answer: await res.json() }
    }
    for (const body of bodies) {
      const sent = performance.now()
      const res = await push(body)
      pushMs += performance.now() - sent
      const parsed = pushResponseSchema.parse(res.answer)
      const refused = parsed.results.find(
        (r, i) =>
          r.status !== (options.refuseOnePerBatch && i === maxMutationsPerPush / 2 ? 'rejected' : 'applied'),
      )
      if (res.status !== 200 || refused)
        throw new Error(`push failed: ${res.status} ${JSON.stringify(refused)}`)
      if (rawBatch) {
        const rows = batchRows.all(clientId, seen) as Array<Record<string, unknown> & { server_seq: number }>
        seen = rows.at(-1)?.server_seq ?? seen
        const started = performance.now()
        rawBatch(rows)
        interleavedRawMs += performance.now() - started
      }
    }

    const started = performance.now()
    const pulled = await fetch(`${base}/api/sync/pull?cursor=${headSeq}&limit=1000`, {
      headers: { Authorization: auth },
    })
    const page = pullResponseSchema.parse(await pulled.json())
    const pullMs = performance.now() - started
    if (page.changes.length < Math.min(1000, count))
      throw new Error(`pull returned ${page.changes.length} changes`)

    const { sqlite } = api.database
    const splices = sqlite
      .prepare('SELECT * FROM splices WHERE client_id = ? ORDER BY server_seq')
      .all(clientId) as Record<string, unknown>[]
    const auditBySeq = new Map<number, Record<string, unknown>[]>()
    const auditRows = sqlite
      .prepare(
        `SELECT at, user_id, client_id, entity, entity_id, field, old_value, new_value, outcome, mutation_seq
         FROM audit_log WHERE client_id = ? ORDER BY id`,
      )
      .all(clientId) as Array<Record<string, unknown> & { mutation_seq: number }>
    for (const row of auditRows)
      auditBySeq.set(row.mutation_seq, [...(auditBySeq.get(row.mutation_seq) ?? []), row])
    const answers = sqlite
      .prepare('SELECT * FROM applied_mutations WHERE client_id = ? ORDER BY seq')
      .all(clientId) as Record<string, unknown>[]
    const client = sqlite.prepare('SELECT * FROM sync_clients WHERE client_id = ?').get(clientId) as Record<
      string,
      unknown
    >
    const refusedCount = options.refuseOnePerBatch ? count / maxMutationsPerPush : 0
    const answered = options.transportFloor ? 0 : count
    if (splices.length !== count - refusedCount || answers.length !== answered)
      throw new Error('the push stored other rows than sent')
    return {
      pushMs,
      interleavedRawMs,
      pullMs,
      stored: { splices, auditBySeq, answers, client },
    } satisfies PushRun
  } finally {
    poster.close()
    server.close()
    api.database.sqlite.close()
  }
}

/** Pushes 10,000 splices through the API, inserts the same rows raw into a second database, pulls 1,000 changes. */
export async function main(options: { log?: (line: string) => void } = {}): Promise<BenchFigure[]> {
  const log = options.log ?? (() => undefined)
  const dir = mkdtempSync(join(tmpdir(), 'lightseam-push-bench-'))
  const shape = layout()
  try {
    await pushThroughApi(dir, 'warm-up', shape, { splices: warmUpSplices })
    log(
      `pushing ${spliceCount.toLocaleString('en')} createSplice in ${spliceCount / maxMutationsPerPush} batches, ` +
        `${repeats} times, with node:http on one kept-alive loopback socket…`,
    )
    log(
      'baseline: the splice rows each push stored, inserted raw (one prepared statement) into a fresh database ' +
        `of the same schema and indexes, ${maxMutationsPerPush} rows a commit as the push batches commit`,
    )
    // Each repeat's raw insert takes the very rows its push stored, so every ratio compares like with like.
    const runs: Array<PushRun & { rawMs: number; rawBatchedMs: number; rawStoredMs: number }> = []
    const floors: PushRun[] = []
    for (let r = 0; r < repeats; r += 1) {
      const interleaved = build(dir, `raw-interleaved-${r}`, shape)
      const api = await pushThroughApi(dir, `api-${r}`, shape, { interleaved: interleaved.database })
      interleaved.database.sqlite.close()
      const floorBaseline = build(dir, `raw-floor-${r}`, shape)
      const floor = await pushThroughApi(dir, `transport-floor-${r}`, shape, {
        transportFloor: true,
        interleaved: floorBaseline.database,
      })
      floorBaseline.database.sqlite.close()
      floors.push(floor)
      const raw = build(dir, `raw-${r}`, shape)
      const rawMs = rawInsert(raw.database, api.stored.splices)
      raw.database.sqlite.close()
      const batched = build(dir, `raw-batched-${r}`, shape)
      const rawBatchedMs = rawInsert(batched.database, api.stored.splices, maxMutationsPerPush)
      batched.database.sqlite.close()
      const all = build(dir, `raw-stored-${r}`, shape)
      const rawStoredMs = rawInsertStored(all.database, api.stored, maxMutationsPerPush)
      all.database.sqlite.close()
      runs.push({ ...api, rawMs, rawBatchedMs, rawStoredMs })
      const share = (ms: number) => `${((100 * ms) / api.pushMs).toFixed(1)} %`
      log(
        `API ${api.pushMs.toFixed(0)} ms (${((1000 * api.pushMs) / spliceCount).toFixed(0)} µs a splice); baseline ` +
          `${api.interleavedRawMs.toFixed(0)} ms (${share(api.interleavedRawMs)}); afterwards the same rows ` +
          `${rawBatchedMs.toFixed(0)} ms in 100-row commits (${share(rawBatchedMs)}), ${rawMs.toFixed(0)} ms in one ` +
          `commit (${share(rawMs)}); every stored row ${rawStoredMs.toFixed(0)} ms (${share(rawStoredMs)})`,
      )
      log(
        `transport alone ${floor.pushMs.toFixed(0)} ms; its baseline ${floor.interleavedRawMs.toFixed(0)} ms ` +
          `(${((100 * floor.interleavedRawMs) / floor.pushMs).toFixed(1)} %)`,
      )
    }
    const median = (values: number[]) => [...values].sort((a, b) => a - b)[Math.floor(values.length / 2)]!
    const medianRun = <R extends PushRun>(list: R[]) =>
      [...list].sort((a, b) => a.pushMs - b.pushMs)[Math.floor(list.length / 2)]!
    const ratioOf = (list: PushRun[]) => median(list.map((run) => (100 * run.interleavedRawMs) / run.pushMs))
    // The median push, with its own raw inserts; the target ratio is the median of the runs' own ratios.
    const api = medianRun(runs)
    const { rawMs, rawBatchedMs, rawStoredMs } = api
    const ratio = ratioOf(runs)
    const floor = medianRun(floors)
    const floorRatio = ratioOf(floors)
    // Statement journals, and the savepoints of a batch run again guarded, spill to temp files past a few pages.
    const before = await pushThroughApi(dir, 'temp-default', shape, { tempStoreDefault: true })
    log(`with SQLite's default temp_store: ${before.pushMs.toFixed(0)} ms`)
    // A refusal sends its whole batch round again with a savepoint per mutation: the worst case of that.
    const refusing = await pushThroughApi(dir, 'one-refused', shape, { refuseOnePerBatch: true })
    log(`with one refused mutation in every batch: ${refusing.pushMs.toFixed(0)} ms`)
    // The same push sent with fetch() (undici), to show what the client alone adds on Node 20.
    const fetched = await pushThroughApi(dir, 'fetch-client', shape, { client: 'fetch' })
    log(`sent with fetch() instead of node:http: ${fetched.pushMs.toFixed(0)} ms`)
    return [
      {
        figure: `push 10,000 createSplice over HTTP (100 × 100), median of ${repeats}`,
        target: 2,
        measured: api.pushMs / 1000,
        unit: 's',
      },
      // The baseline of DESIGN.md §5 ("raw better-sqlite3 insert throughput for the same rows"): the splice
      // rows the push stored, as stored, into the same schema (same indexes), with one prepared statement,
      // committed 100 rows at a time as the push commits its batches (same durability: synchronous=FULL).
      {
        figure:
          'baseline: raw insert of the same splice rows, same indexes, 100-row commits between the pushes',
        target: null,
        measured: api.interleavedRawMs / 1000,
        unit: 's',
      },
      {
        figure: `API throughput / baseline throughput, same run, median of ${repeats} (≥ target)`,
        target: 25,
        measured: ratio,
        unit: '%',
      },
      // For comparison only: the same rows inserted after the push (in 100-row commits and in one), and every
      // row the push stored (splice, its audit row, the stored answer) in the same 100-mutation commits, so
      // what is left over that is the API's own cost.
      {
        figure: 'raw insert of the same splice rows after the push, 100-row commits',
        target: null,
        measured: rawBatchedMs / 1000,
        unit: 's',
      },
      {
        figure: 'API throughput / raw throughput after the push, 100-row commits',
        target: null,
        measured: (100 * rawBatchedMs) / api.pushMs,
        unit: '%',
      },
      {
        figure: 'raw insert of the same splice rows in one commit',
        target: null,
        measured: rawMs / 1000,
        unit: 's',
      },
      {
        figure: 'API throughput / raw throughput in one commit',
        target: null,
        measured: (100 * rawMs) / api.pushMs,
        unit: '%',
      },
      {
        figure: 'raw insert of every row the push stored (splices, audit, answers), 100 mutations a commit',
        target: null,
        measured: rawStoredMs / 1000,
        unit: 's',
      },
      {
        figure: 'API throughput / raw throughput of every stored row, same commits',
        target: null,
        measured: (100 * rawStoredMs) / api.pushMs,
        unit: '%',
      },
      // What HTTP, Express and the envelope leave of the baseline before any of SYNC.md's work (addTransportFloor).
      {
        figure: `push 10,000 through the transport alone (no SYNC.md work, raw splice inserts), median of ${repeats}`,
        target: null,
        measured: floor.pushMs / 1000,
        unit: 's',
        baseline: api.pushMs / 1000,
      },
      {
        figure: `transport alone throughput / its baseline throughput, same run, median of ${repeats}`,
        target: null,
        measured: floorRatio,
        unit: '%',
      },
      {
        figure: 'pull 1,000 changes (one page, splicer scope)',
        target: null,
        measured: api.pullMs,
        unit: 'ms',
      },
      {
        figure:
          'push 10,000 with one refused mutation in every batch (each batch run again guarded), one run',
        target: null,
        measured: refusing.pushMs / 1000,
        unit: 's',
        baseline: api.pushMs / 1000,
      },
      {
        figure: 'push 10,000 sent with fetch() (undici) instead of node:http (one run, for comparison)',
        target: null,
        measured: fetched.pushMs / 1000,
        unit: 's',
        baseline: api.pushMs / 1000,
      },
      {
        figure: "push 10,000 with SQLite's default temp_store (one run, for comparison)",
        target: null,
        measured: before.pushMs / 1000,
        unit: 's',
        baseline: api.pushMs / 1000,
      },
    ]
  } finally {
    rmSync(dir, { recursive: true, force: true })
  }
}

/** Formats the figures as the table the benchmark prints. */
export function formatTable(figures: BenchFigure[]): string {
  const num = (v: number) => (v < 10 ? v.toFixed(3) : v.toFixed(1))
  const rows = figures.map((f) => [
    f.figure,
    f.target === null ? '—' : `${f.target} ${f.unit}`,
    `${num(f.measured)} ${f.unit}`,
  ])
  const head = ['figure', 'target', 'measured']
  const widths = head.map((h, i) => Math.max(h.length, ...rows.map((r) => r[i]!.length)))
  const line = (cells: string[]) =>
    cells.map((c, i) => (i === 0 ? c.padEnd(widths[i]!) : c.padStart(widths[i]!))).join('  ')
  return [line(head), widths.map((w) => '-'.repeat(w)).join('  '), ...rows.map(line)].join('\n')
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  const figures = await main({ log: (line) => process.stdout.write(`${line}\n`) })
  process.stdout.write(`\n${formatTable(figures)}\n`)
}

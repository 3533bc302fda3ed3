// Load on 127.0.0.1 against the real server in a process of its own: pushes in 20-mutation batches over 20
// connections, pull pages, photo uploads, and a sign-in flood. Every phase has a fixed amount of work, so the
// run stops by itself. Afterwards the database must hold exactly the mutations the server acknowledged.
// Run with `npx tsx tests/bench/load.bench.ts`; importing the file only defines main().
import { mkdtempSync, rmSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { pathToFileURL } from 'node:url'
import autocannon from 'autocannon'
import BetterSqlite3 from 'better-sqlite3'
import { v7 as uuidv7 } from 'uuid'
import { demoUsers } from '#db/seed'
import { pushResponseSchema } from '#shared/schemas/sync'
import { startChildServer } from '../api/support/childServer'
import { jpegBytes, sha256 } from '../api/support/photos'
import type { BenchFigure } from './board.bench'

const connections = 20
const batchesPerConnection = 25
const perBatch = 20
const pullRequests = 2_000
const uploads = 300
const signInFlood = 600

/** The p-th percentile of latencies in ms. */
function percentile(values: number[], p: number): number {
  const sorted = [...values].sort((a, b) => a - b)
  return sorted[Math.min(sorted.length - 1, Math.floor((p / 100) * sorted.length))] ?? 0
}

/** Runs `workers` loops at once, each doing `each` requests in turn; returns each request's latency. */
async function boundedLoop(
  workers: number,
  each: number,
  request: (worker: number, n: number) => Promise<boolean>,
): Promise<{ latencies: number[]; errors: number; ms: number }> {
  const latencies: number[] = []
  let errors = 0
  const started = performance.now()
  await Promise.all(
    Array.from({ length: workers }, async (_, worker) => {
      for (let n = 0; n < each; n += 1) {
        const sent = performance.now()
        const ok = await request(worker, n).catch(() => false)
        latencies.push(performance.now() - sent)
        if (!ok) errors += 1
      }
    }),
  )
  return { latencies, errors, ms: performance.now() - started }
}

export async function main(options: { log?: (line: string) => void } = {}): Promise<BenchFigure[]> {
  const log = options.log ?? (() => undefined)
  const dataDir = mkdtempSync(join(tmpdir(), 'lightseam-load-'))
  const server = await startChildServer(dataDir)
  try {
    const dbFile = join(dataDir, 'lightseam.sqlite')
    const seed = new BetterSqlite3(dbFile, { readonly: true })
    const slots = seed
      .prepare(
        `SELECT p.closure_id AS closureId, p.tray_id AS trayId, p.slot, p.cable_a_id AS cableAId, p.fiber_a AS fiberA,
           p.cable_b_id AS cableBId, p.fiber_b AS fiberB
         FROM plan_rows p JOIN closures c ON c.id = p.closure_id WHERE c.state <> 'signed_off'
           AND c.crew_id = (SELECT crew_id FROM users WHERE email LIKE 'maren%')`,
      )
      .all() as Array<Record<string, unknown>>
    const splicerId = (seed.prepare("SELECT id FROM users WHERE email LIKE 'maren%'").get() as { id: string })
      .id
    seed.close()

    const splicer = demoUsers.find((u) => u.key === 'splicer')!
    const signIn = await fetch(`${server.url}/api/auth/sign-in`, {
      method: 'POST',
      headers: { 'Content-Type': 'application/json' },
      body: JSON.stringify({ email: splicer.email, password: splicer.password }),
    })
    const auth = `Bearer ${((await signIn.json()) as { accessToken: string }).accessToken}`

    // Push: one device per connection, each sending its batches in order, as the sync engine does.
    const clients = Array.from({ length: connections }, () => uuidv7())
    const acknowledged = new Map<string, number>(clients.map((c) => [c, 0]))
    const bodies = clients.map((clientId) =>
      Array.from({ length: batchesPerConnection }, (_, b) =>
        JSON.stringify({
          clientId,
          schemaVersion: 1,
          mutations: Array.from({ length: perBatch }, (_, i) => {
            const seq = b * perBatch + i + 1
            return {
              seq,
              name: 'createSplice',
              args: {
                id: uuidv7(),
                ...slots[(seq * 7 + b) % slots.length],
                method: 'single_fusion',
                lossDb: ((seq * 13) % 180) / 1000,
                splicedAt: new Date(Date.UTC(2025, 5, 11, 8) + seq * 1000).toISOString(),
                splicerId,
                clientId,
              },
              baseServerSeq: 0,
              clientTime: new Date().toISOString(),
            }
          }),
        }),
      ),
    )
    log(`push: ${connections} connections × ${batchesPerConnection} batches × ${perBatch} createSplice…`)
    const push = await boundedLoop(connections, batchesPerConnection, async (worker, n) => {
      const res = await fetch(`${server.url}/api/sync/push`, {
        method: 'POST',
        headers: { 'Content-Type': 'application/json', Authorization: auth },
        body: bodies[worker]![n]!,
      })
      if (res.status !== 200) return false
      const answer = pushResponseSchema.parse(await res.json())
      const applied = answer.results.filter((r) => r.status === 'applied').length
      acknowledged.set(clients[worker]!, acknowledged.get(clients[worker]!)! + applied)
      return applied === perBatch
    })
    const mutations = connections * batchesPerConnection * perBatch
    const pushRate = (1000 * [...acknowledged.values()].reduce((a, b) => a + b, 0)) / push.ms
    log(
      `push: ${pushRate.toFixed(0)} mutations/s, p50 ${percentile(push.latencies, 50).toFixed(1)} ms, ` +
        `p99 ${percentile(push.latencies, 99).toFixed(1)} ms, ${push.errors} errors`,
    )

    // What the database holds must be exactly what was acknowledged, device by device.
    const db = new BetterSqlite3(dbFile, { readonly: true })
    const count = db.prepare('SELECT count(*) AS n FROM splices WHERE client_id = ?')
    let mismatched = 0
    for (const [clientId, acked] of acknowledged)
      if ((count.get(clientId) as { n: number }).n !== acked) mismatched += 1
    db.close()
    log(`push: ${mismatched} of ${connections} devices differ between acknowledged and stored`)

    // Pull pages with autocannon: the same splicer reading 500 changes at a time.
    const pull = await autocannon({
      url: `${server.url}/api/sync/pull?cursor=0&limit=500`,
      connections,
      amount: pullRequests,
      headers: { Authorization: auth },
    })
    log(
      `pull: ${pull.requests.average.toFixed(0)} pages/s, p50 ${pull.latency.p50} ms, p99 ${pull.latency.p99} ms, ` +
        `${pull.errors + pull.non2xx} errors`,
    )

    // Photo uploads: distinct photos of phone size, 10 at a time.
    const photos = Array.from({ length: uploads }, () => jpegBytes(1600, 1200, 150_000))
    const upload = await boundedLoop(10, uploads / 10, async (worker, n) => {
      const bytes = photos[worker * (uploads / 10) + n]!
      const res = await fetch(`${server.url}/api/photos/${sha256(bytes)}`, {
        method: 'PUT',
        headers: { 'Content-Type': 'image/jpeg', Authorization: auth },
        body: new Uint8Array(bytes),
      })
      await res.arrayBuffer()
      return res.status === 201
    })
    const megabytes = photos.reduce((sum, p) => sum + p.length, 0) / 1e6
    log(
      `photos: ${((1000 * uploads) / upload.ms).toFixed(0)} uploads/s (${((1000 * megabytes) / upload.ms).toFixed(1)} MB/s), ` +
        `p50 ${percentile(upload.latencies, 50).toFixed(1)} ms, p99 ${percentile(upload.latencies, 99).toFixed(1)} ms, ` +
        `${upload.errors} errors`,
    )

    // A sign-in flood from one address with a wrong password: the limiter must answer 429 quickly.
    const flood = await autocannon({
      url: `${server.url}/api/auth/sign-in`,
      method: 'POST',
      connections,
      amount: signInFlood,
      headers: { 'Content-Type': 'application/json' },
      body: JSON.stringify({ email: splicer.email, password: 'not-the-password-123' }),
    })
    const limited = flood.statusCodeStats?.['429']?.count ?? 0
    const refused = flood.statusCodeStats?.['401']?.count ?? 0
    const other = flood.requests.sent - limited - refused
    log(
      `sign-in flood: ${refused} refused (401), ${limited} rate-limited (429), ${other} other; ` +
        `p50 ${flood.latency.p50} ms, p99 ${flood.latency.p99} ms`,
    )

    return [
      {
        figure: `load push: mutations/s (${connections} connections, ${perBatch} a batch)`,
        target: null,
        measured: pushRate,
        unit: '/s',
      },
      {
        figure: 'load push: p50 latency of a batch',
        target: null,
        measured: percentile(push.latencies, 50),
        unit: 'ms',
      },
      {
        figure: 'load push: p99 latency of a batch',
        target: null,
        measured: percentile(push.latencies, 99),
        unit: 'ms',
      },
      {
        figure: `load push: failed batches of ${mutations / perBatch}`,
        target: 0,
        measured: push.errors,
        unit: '',
      },
      { figure: 'load push: devices whose stored ≠ acknowledged', target: 0, measured: mismatched, unit: '' },
      {
        figure: 'load pull: pages of 500 per second',
        target: null,
        measured: pull.requests.average,
        unit: '/s',
      },
      { figure: 'load pull: p99 latency', target: null, measured: pull.latency.p99, unit: 'ms' },
      { figure: 'load pull: errors', target: 0, measured: pull.errors + pull.non2xx, unit: '' },
      {
        figure: 'load photos: uploads per second (10 at once, ~150 KB)',
        target: null,
        measured: (1000 * uploads) / upload.ms,
        unit: '/s',
      },
      {
        figure: 'load photos: p99 latency',
        target: null,
        measured: percentile(upload.latencies, 99),
        unit: 'ms',
      },
      { figure: 'load photos: errors', target: 0, measured: upload.errors, unit: '' },
      {
        figure: `load sign-in flood: rate-limited of ${signInFlood}`,
        target: null,
        measured: limited,
        unit: '',
      },
      { figure: 'load sign-in flood: p99 latency', target: null, measured: flood.latency.p99, unit: 'ms' },
    ]
  } finally {
    await server.kill()
    rmSync(dataDir, { recursive: true, force: true })
  }
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  const figures = await main({ log: (line) => process.stdout.write(`${line}\n`) })
  for (const f of figures) process.stdout.write(`${f.figure}: ${f.measured.toFixed(1)} ${f.unit}\n`)
}

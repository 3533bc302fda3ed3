// Board and roll-up timings at 100k and 1M splices. Run with `npx tsx tests/bench/board.bench.ts`;
// importing the file only defines main(), so a bench runner can collect the figures.
import { mkdtempSync, rmSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { performance } from 'node:perf_hooks'
import { pathToFileURL } from 'node:url'
import { v7 } from 'uuid'
import { type Database, openDatabase, writeTransaction } from '#db/client'
import { runMigrations } from '#db/migrate'
import type { ClosureKind, ClosureState } from '#shared/schemas/enums'
import type { ProjectLimits } from '#shared/schemas/project'
import {
  type BoardQuery,
  closureRollup,
  explainProjectBoard,
  projectBoard,
} from '../../server/repositories/board'
import { insertSplice, recomputeProjectTotals } from '../../server/repositories/splices'

export interface BenchFigure {
  figure: string
  /** The design target (DESIGN.md §5), in `unit`; null for figures reported without one. */
  target: number | null
  /** Measured at the full size (1,000,000 splices in 10,000 closures). */
  measured: number
  unit: string
  /** The same figure at 100,000 splices in 1,000 closures. */
  baseline?: number
}

const limits: ProjectLimits = {
  estimate: { standardMaxDb: 0.3, contractTargetDb: 0.1 },
  perWavelength: [],
  attemptsBeforeAcceptWithFlag: 3,
}
const kinds: ClosureKind[] = ['handhole', 'vault', 'pedestal', 'aerial', 'building', 'other']
const traysPerClosure = 5
const slotsPerTray = 24
const plannedPerClosure = traysPerClosure * slotsPerTray

function mulberry32(seed: number): () => number {
  let a = seed >>> 0
  return () => {
    a = (a + 0x6d2b79f5) >>> 0
    let t = a
    t = Math.imul(t ^ (t >>> 15), t | 1)
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61)
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296
  }
}

// uuid's v7() draws crypto randomness per call (≈ 5 µs): 2.3M of them would be a third of the build. These
// keep the UUIDv7 shape and time order (a fresh v7 prefix, then a counter) at a fraction of the cost.
function idMaker(): () => string {
  const prefix = v7().slice(0, 24)
  let counter = 0
  return () => `${prefix}${(counter++).toString(16).padStart(12, '0')}`
}

export interface World {
  database: Database
  projectId: string
  crewIds: string[]
  userId: string
  cableA: string
  cableB: string
  closureIds: string[]
  random: () => number
  id: () => string
}

export function setUp(database: Database): World {
  const { sqlite } = database
  const world: World = {
    database,
    projectId: v7(),
    crewIds: Array.from({ length: 10 }, () => v7()),
    userId: v7(),
    cableA: v7(),
    cableB: v7(),
    closureIds: [],
    random: mulberry32(20250610),
    id: idMaker(),
  }
  writeTransaction(sqlite, (seq) => {
    sqlite
      .prepare(
        `INSERT INTO projects (id, code, name, limits, photo_rules, otdr_tolerance_m, disagreement_db, server_seq)
         VALUES (?, 'BENCH-01', 'Benchmark build', ?, ?, 15, 0.15, ?)`,
      )
      .run(
        world.projectId,
        JSON.stringify(limits),
        JSON.stringify({ perSplice: 'none', perTray: false, closedClosure: false }),
        seq,
      )
    const crew = sqlite.prepare('INSERT INTO crews (id, name, server_seq) VALUES (?, ?, ?)')
    world.crewIds.forEach((id, i) => crew.run(id, `Bench crew ${i + 1}`, seq))
    sqlite
      .prepare(
        `INSERT INTO users (id, email, name, role, crew_id, password_hash, created_at, server_seq)
         VALUES (?, 'bench.splicer@example.test', 'Bench splicer', 'splicer', ?, 'x', '2025-01-01T00:00:00.000Z', ?)`,
      )
      .run(world.userId, world.crewIds[0], seq)
    const cable = sqlite.prepare(
      `INSERT INTO cables (id, project_id, label, fiber_count, construction, fibers_per_unit, fiber_type, length_m, server_seq)
       VALUES (?, ?, ?, 144, 'loose_tube', 12, 'G.652.D', 2000, ?)`,
    )
    cable.run(world.cableA, world.projectId, 'BENCH-A-144', seq)
    cable.run(world.cableB, world.projectId, 'BENCH-B-144', seq)
  })
  return world
}

/** Adds closures [from, to) with trays, plan rows and on average 100 splices each, in raw prepared inserts. */
export function grow(world: World, from: number, to: number): number {
  const { sqlite } = world.database
  const closure = sqlite.prepare(
    `INSERT INTO closures (id, project_id, label, kind, lat, lon, route_position_m, roadside, crew_id, state, server_seq)
     VALUES (?, ?, ?, ?, ?, ?, ?, 0, ?, ?, ?)`,
  )
  const tray = sqlite.prepare(
    'INSERT INTO trays (id, closure_id, number, capacity, server_seq) VALUES (?, ?, ?, ?, ?)',
  )
  const plan = sqlite.prepare(
    `INSERT INTO plan_rows (id, closure_id, tray_id, slot, cable_a_id, fiber_a, cable_b_id, fiber_b, server_seq)
     VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)`,
  )
  const splice = sqlite.prepare(
    `INSERT INTO splices (id, closure_id, tray_id, slot, cable_a_id, fiber_a, cable_b_id, fiber_b, method, loss_db, attempt,
       resplice_reason, supersedes_id, spliced_at, splicer_id, client_id, is_current, flags, created_at, server_seq)
     VALUES (?, ?, ?, ?, ?, ?, ?, ?, 'single_fusion', ?, ?, ?, ?, ?, ?, 'bench-client', ?, '[]', ?, ?)`,
  )
  const { random } = world
  const loss = () =>
    (random() < 0.03 ? Math.round(110 + random() * 120) : Math.round(5 + random() * 50)) / 1000
  let written = 0
  const chunk = 1000
  for (let start = from; start < to; start += chunk) {
    writeTransaction(sqlite, (seq) => {
      for (let i = start; i < Math.min(to, start + chunk); i += 1) {
        // Pairs of closures share 200 splices, so every thousand closures hold exactly 100,000.
        const spread = (i >> 1) % 50
        const total = i % 2 === 0 ? 100 + spread : 100 - spread
        const current = Math.min(total - (total % 7), plannedPerClosure)
        const superseded = total - current
        const state: ClosureState =
          current === plannedPerClosure ? 'signed_off' : current > 0 ? 'in_progress' : 'planned'
        const closureId = world.id()
        world.closureIds.push(closureId)
        closure.run(
          closureId,
          world.projectId,
          `C-${String(i).padStart(5, '0')}`,
          kinds[i % kinds.length],
          54.3 + random() * 0.1,
          -2.9 + random() * 0.1,
          i * 25 + Math.round(random() * 20),
          world.crewIds[i % world.crewIds.length],
          state,
          seq,
        )
        const trayIds = Array.from({ length: traysPerClosure }, (_, t) => {
          const id = world.id()
          tray.run(id, closureId, t + 1, slotsPerTray, seq)
          return id
        })
        for (let k = 0; k < plannedPerClosure; k += 1) {
          plan.run(
            world.id(),
            closureId,
            trayIds[Math.floor(k / slotsPerTray)],
            (k % slotsPerTray) + 1,
            world.cableA,
            k + 1,
            world.cableB,
            k + 1,
            seq,
          )
        }
        const time = Date.UTC(2025, 5, 10, 7) + i * 1000
        for (let k = 0; k < current; k += 1) {
          const trayId = trayIds[Math.floor(k / slotsPerTray)]
          const slot = (k % slotsPerTray) + 1
          const fiberB = k % 97 === 13 ? k + 2 : k + 1
          const at = new Date(time + k * 90_000).toISOString()
          let supersedes: string | null = null
          if (k < superseded) {
            supersedes = world.id()
            splice.run(
              supersedes,
              closureId,
              trayId,
              slot,
              world.cableA,
              k + 1,
              world.cableB,
              fiberB,
              0.25,
              1,
              null,
              null,
              at,
              world.userId,
              0,
              at,
              seq,
            )
          }
          const attempt = supersedes ? 2 : 1
          splice.run(
            world.id(),
            closureId,
            trayId,
            slot,
            world.cableA,
            k + 1,
            world.cableB,
            fiberB,
            loss(),
            attempt,
            supersedes ? 'high_loss' : null,
            supersedes,
            at,
            world.userId,
            1,
            at,
            seq,
          )
        }
        written += total
      }
    })
  }
  return written
}

function timeRuns(runs: number, work: () => unknown): { median: number; p95: number } {
  for (let i = 0; i < 10; i += 1) work()
  const samples: number[] = []
  for (let i = 0; i < runs; i += 1) {
    const started = performance.now()
    work()
    samples.push(performance.now() - started)
  }
  samples.sort((a, b) => a - b)
  const at = (q: number) => samples[Math.min(samples.length - 1, Math.floor(q * samples.length))] as number
  return { median: at(0.5), p95: at(0.95) }
}

interface Measured {
  [figure: string]: { value: number; target: number | null; unit: string }
}

function measure(world: World, log: (line: string) => void): Measured {
  const { database, projectId } = world
  const out: Measured = {}
  const put = (figure: string, target: number | null, result: { median: number; p95: number }) => {
    out[`${figure}, median`] = { value: result.median, target, unit: 'ms' }
    out[`${figure}, p95`] = { value: result.p95, target, unit: 'ms' }
  }
  const pages: Array<[string, BoardQuery]> = [
    ['project board, first 50 by completion', { limit: 50, offset: 0, sort: 'completion', dir: 'asc' }],
    ['project board, first 50 by label', { limit: 50, offset: 0, sort: 'label', dir: 'asc' }],
    [
      'project board, 50 of one crew by last activity',
      { limit: 50, offset: 0, sort: 'lastActivity', dir: 'desc', crewId: world.crewIds[3] },
    ],
  ]
  for (const [figure, query] of pages) {
    log(`  plan for ${figure}: ${explainProjectBoard(database.db, projectId, query).join(' / ')}`)
    put(
      figure,
      50,
      timeRuns(200, () => projectBoard(database.db, projectId, query)),
    )
  }
  let n = 0
  put(
    'one closure roll-up',
    5,
    timeRuns(2000, () =>
      closureRollup(database.db, world.closureIds[(n += 7919) % world.closureIds.length] as string),
    ),
  )

  // Write cost of the maintained totals, 1,000 splices in one transaction each way: a splicer's push (new
  // splices into ten closures) and the worst case (re-splices scattered over the whole project).
  const ids = Array.from({ length: 2000 }, () => v7())
  const trayOf = database.sqlite.prepare('SELECT id FROM trays WHERE closure_id = ? ORDER BY number')
  const crewClosures = world.closureIds.slice(-10)
  const fresh = Array.from({ length: 1000 }, (_, i) => {
    const closureId = crewClosures[i % 10] as string
    const trays = trayOf.all(closureId) as Array<{ id: string }>
    const k = Math.floor(i / 10)
    return {
      id: ids[i] as string,
      closureId,
      trayId: (trays[Math.floor(k / slotsPerTray) % traysPerClosure] as { id: string }).id,
      slot: (k % slotsPerTray) + 1,
      fiber: k + 1,
    }
  })
  const current = database.sqlite.prepare(
    `SELECT id, closure_id, tray_id, slot, cable_a_id, fiber_a, cable_b_id, fiber_b FROM splices
     WHERE closure_id = ? AND is_current = 1 LIMIT 1`,
  )
  interface Current {
    id: string
    closure_id: string
    tray_id: string
    slot: number
    fiber_a: number
    fiber_b: number
  }
  const scattered = Array.from(
    { length: 1000 },
    (_, i) => current.get(world.closureIds[(i * 104729) % world.closureIds.length]) as Current,
  )
  const perSplice = (work: (serverSeq: number) => void) => {
    const started = performance.now()
    writeTransaction(database.sqlite, work)
    return (performance.now() - started) / 1000
  }
  const base = {
    method: 'single_fusion' as const,
    lossDb: 0.021,
    splicedAt: '2025-06-11T08:00:00.000Z',
    splicerId: world.userId,
    clientId: 'bench-client',
    cableAId: world.cableA,
    cableBId: world.cableB,
  }
  const pushed = perSplice((serverSeq) => {
    for (const s of fresh) {
      const row = {
        ...base,
        id: s.id,
        closureId: s.closureId,
        trayId: s.trayId,
        slot: s.slot,
        fiberA: s.fiber,
        fiberB: s.fiber,
      }
      insertSplice(database.sqlite, row, { serverSeq, limits })
    }
  })
  const resplit = perSplice((serverSeq) => {
    scattered.forEach((old, i) => {
      const row = {
        ...base,
        id: ids[1000 + i] as string,
        closureId: old.closure_id,
        trayId: old.tray_id,
        slot: old.slot,
        fiberA: old.fiber_a,
        fiberB: old.fiber_b,
        attempt: 2,
        respliceReason: 'high_loss' as const,
        supersedesId: old.id,
      }
      insertSplice(database.sqlite, row, { serverSeq, limits })
    })
  })
  out['insertSplice + totals, new splices into 10 closures, per splice'] = {
    value: pushed,
    target: null,
    unit: 'ms',
  }
  out['insertSplice + totals, re-splices over 1,000 closures, per splice'] = {
    value: resplit,
    target: null,
    unit: 'ms',
  }
  return out
}

/** Builds the two sizes, measures each and returns the figures (measured at 1M, baseline at 100k). */
export function main(options: { log?: (line: string) => void } = {}): BenchFigure[] {
  const log = options.log ?? (() => undefined)
  const dir = mkdtempSync(join(tmpdir(), 'lightseam-bench-'))
  const database = openDatabase(join(dir, 'bench.sqlite'))
  try {
    runMigrations(database.db)
    const world = setUp(database)
    const sizes: Array<{ closures: number; measured?: Measured }> = [
      { closures: 1_000 },
      { closures: 10_000 },
    ]
    let splices = 0
    const extra: Record<string, { small: number; large: number }> = {
      build: { small: 0, large: 0 },
      recompute: { small: 0, large: 0 },
    }
    for (const size of sizes) {
      const key = size.closures === 1_000 ? 'small' : 'large'
      let started = performance.now()
      // Build-only settings (the figures are measured with the server's own settings restored): foreign
      // key checks and a small page cache would triple the build time and measure nothing of interest.
      const cacheSize = database.sqlite.pragma('cache_size', { simple: true }) as number
      database.sqlite.pragma('foreign_keys = OFF')
      database.sqlite.pragma('cache_size = -262144')
      splices += grow(world, world.closureIds.length, size.closures)
      database.sqlite.pragma(`cache_size = ${cacheSize}`)
      database.sqlite.pragma('foreign_keys = ON')
      extra.build![key] = (performance.now() - started) / 1000
      started = performance.now()
      writeTransaction(database.sqlite, () => recomputeProjectTotals(database.db, world.projectId, limits))
      extra.recompute![key] = (performance.now() - started) / 1000
      database.sqlite.pragma('optimize')
      log(
        `built ${splices.toLocaleString('en')} splices in ${size.closures.toLocaleString('en')} closures (${extra.build![key]!.toFixed(1)} s, totals rebuilt in ${extra.recompute![key]!.toFixed(1)} s)`,
      )
      size.measured = measure(world, log)
    }
    const [small, large] = sizes.map((s) => s.measured as Measured) as [Measured, Measured]
    const figures: BenchFigure[] = Object.entries(large).map(([figure, m]) => ({
      figure,
      target: m.target,
      measured: m.value,
      unit: m.unit,
      baseline: small[figure]?.value,
    }))
    figures.push(
      {
        figure: 'build (raw prepared inserts incl. plan rows)',
        target: null,
        measured: extra.build!.large,
        unit: 's',
        baseline: extra.build!.small,
      },
      {
        figure: 'recomputeProjectTotals, whole project',
        target: null,
        measured: extra.recompute!.large,
        unit: 's',
        baseline: extra.recompute!.small,
      },
    )
    return figures
  } finally {
    database.sqlite.close()
    rmSync(dir, { recursive: true, force: true })
  }
}

/** Formats the figures as the table the benchmark prints. */
export function formatTable(figures: BenchFigure[]): string {
  const num = (v: number | undefined) => (v === undefined ? '—' : v < 10 ? v.toFixed(3) : v.toFixed(1))
  const rows = figures.map((f) => [
    f.figure,
    f.target === null ? '—' : `≤ ${f.target} ${f.unit}`,
    `${num(f.baseline)} ${f.unit}`,
    `${num(f.measured)} ${f.unit}`,
    f.baseline ? `${(f.measured / f.baseline).toFixed(2)}×` : '—',
  ])
  const head = ['figure', 'target', 'at 100k', 'at 1M', '1M / 100k']
  const widths = head.map((h, i) => Math.max(h.length, ...rows.map((r) => (r[i] as string).length)))
  const line = (cells: string[]) =>
    cells.map((c, i) => (i === 0 ? c.padEnd(widths[i]!) : c.padStart(widths[i]!))).join('  ')
  return [line(head), widths.map((w) => '-'.repeat(w)).join('  '), ...rows.map(line)].join('\n')
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  const started = performance.now()
  const figures = main({ log: (line) => process.stdout.write(`${line}\n`) })
  process.stdout.write(
    `\n${formatTable(figures)}\n\n(total ${((performance.now() - started) / 1000).toFixed(0)} s)\n`,
  )
}

import bcrypt from 'bcryptjs'
import { v7 } from 'uuid'
import { assessSplice, type NeighbourSplice } from '#shared/domain/acceptance'
import { rangePlan, straightPlan, type PlanTray } from '#shared/domain/plan'
import type { ClosureKind, ClosureState, RespliceReason, Role, SpliceMethod } from '#shared/schemas/enums'
import { defaultPhotoRules, defaultProjectLimits, type ProjectLimits } from '#shared/schemas/project'
import { insertSplice, recomputeProjectTotals } from '../server/repositories/splices'
import { type Conn, dbOf, rawSqlite, writeTransaction } from './client'
import { seedDemoOtdr } from './seed-otdr'
import {
  auditLog,
  cables,
  closureAssignments,
  closures,
  crews,
  notes,
  planRows,
  projects,
  trays,
  users,
} from './schema/index'

// The demo scenario: a fictional river town, Corvell Ford, its first fiber-to-the-home build and one
// working day of a splice crew. Every name, street, place and person here is invented.

type CrewKey = 'crew1' | 'crew2'

export interface DemoUser {
  key: 'splicer' | 'foreman' | 'office' | 'inspector' | 'splicer2' | 'foreman2'
  email: string
  name: string
  role: Role
  crew: CrewKey | null
  /** Demo only: printed at start-up so people can sign in to the demo. Never a real credential. */
  password: string
}

const domain = 'corvellford-fiber.test'

/** The demo sign-ins, with their plaintext passwords: demo data only, never for real work. */
export const demoUsers: readonly DemoUser[] = [
  {
    key: 'splicer',
    email: `maren.oduya@${domain}`,
    name: 'Maren Oduya',
    role: 'splicer',
    crew: 'crew1',
    password: 'splice-demo-1',
  },
  {
    key: 'foreman',
    email: `ines.barrowclough@${domain}`,
    name: 'Ines Barrowclough',
    role: 'foreman',
    crew: 'crew1',
    password: 'foreman-demo-1',
  },
  {
    key: 'office',
    email: `priya.halvorsen@${domain}`,
    name: 'Priya Halvorsen',
    role: 'office',
    crew: null,
    password: 'office-demo-1',
  },
  {
    key: 'inspector',
    email: `walt.emberley@${domain}`,
    name: 'Walt Emberley',
    role: 'inspector',
    crew: null,
    password: 'inspect-demo-1',
  },
  {
    key: 'splicer2',
    email: `tobin.achterberg@${domain}`,
    name: 'Tobin Achterberg',
    role: 'splicer',
    crew: 'crew2',
    password: 'splice-demo-2',
  },
  {
    key: 'foreman2',
    email: `odile.marchbank@${domain}`,
    name: 'Odile Marchbank',
    role: 'foreman',
    crew: 'crew2',
    password: 'foreman-demo-2',
  },
]

export const demoProjectCode = 'CVF-FTTH-01'

export interface SeedOptions {
  /** Overrides a demo user's password (tests use this to set their own). */
  passwordFor?: (user: DemoUser) => string
  /** bcrypt cost; 10 unless given, lower in tests. */
  bcryptCost?: number
}

// A fixed generator, so every seeded database holds the same scenario (ids, losses, times).
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

const round3 = (value: number) => Math.round(value * 1000) / 1000
const setUpAt = Date.parse('2025-05-20T08:00:00.000Z')
const workDay = '2025-06-10'
const clockAt = (hhmm: string) => Date.parse(`${workDay}T${hhmm}:00.000Z`)
const iso = (ms: number) => new Date(ms).toISOString()

interface ClosureSpec {
  key: string
  label: string
  kind: ClosureKind
  routePositionM: number
  roadside: boolean
  crew: CrewKey
  trays: number[]
}

interface CableSpec {
  key: string
  label: string
  fiberCount: number
  construction: 'loose_tube' | 'ribbon'
  fibersPerUnit: number
  ribbonsPerTube: number | null
  fiberType: 'G.652.D' | 'G.657.A1'
  lengthM: number
}

const cableSpecs: CableSpec[] = [
  {
    key: 'trunkA',
    label: 'TR-864-A Hub to Weir Road',
    fiberCount: 864,
    construction: 'ribbon',
    fibersPerUnit: 12,
    ribbonsPerTube: 6,
    fiberType: 'G.652.D',
    lengthM: 1262,
  },
  {
    key: 'trunkB',
    label: 'TR-864-B Weir Road to Tannery Row',
    fiberCount: 864,
    construction: 'ribbon',
    fibersPerUnit: 12,
    ribbonsPerTube: 6,
    fiberType: 'G.652.D',
    lengthM: 396,
  },
  {
    key: 'ds288',
    label: 'DS-288 Tannery Row to Mill Race',
    fiberCount: 288,
    construction: 'loose_tube',
    fibersPerUnit: 12,
    ribbonsPerTube: null,
    fiberType: 'G.652.D',
    lengthM: 1574,
  },
  {
    key: 'ds144',
    label: 'DS-144 Tannery Row to Kiln Street',
    fiberCount: 144,
    construction: 'loose_tube',
    fibersPerUnit: 12,
    ribbonsPerTube: null,
    fiberType: 'G.657.A1',
    lengthM: 731,
  },
  {
    key: 'drSloe',
    label: 'DR-012 Sloe Hill',
    fiberCount: 12,
    construction: 'loose_tube',
    fibersPerUnit: 12,
    ribbonsPerTube: null,
    fiberType: 'G.657.A1',
    lengthM: 86,
  },
  {
    key: 'drMaltings',
    label: 'DR-024 Old Maltings',
    fiberCount: 24,
    construction: 'loose_tube',
    fibersPerUnit: 12,
    ribbonsPerTube: null,
    fiberType: 'G.657.A1',
    lengthM: 142,
  },
  {
    key: 'drOsier',
    label: 'DR-024 Osier Walk',
    fiberCount: 24,
    construction: 'loose_tube',
    fibersPerUnit: 6,
    ribbonsPerTube: null,
    fiberType: 'G.657.A1',
    lengthM: 213,
  },
  {
    key: 'drFootbridge',
    label: 'DR-012 Footbridge',
    fiberCount: 12,
    construction: 'loose_tube',
    fibersPerUnit: 12,
    ribbonsPerTube: null,
    fiberType: 'G.657.A1',
    lengthM: 118,
  },
]

// Route positions are metres of trunk from the hub; the crews' day runs down the river from the vault.
const closureSpecs: ClosureSpec[] = [
  {
    key: 'vault',
    label: 'VLT-01 Weir Road',
    kind: 'vault',
    routePositionM: 1240,
    roadside: false,
    crew: 'crew1',
    trays: [72, 72],
  },
  {
    key: 'handhole',
    label: 'HH-02 Tannery Row',
    kind: 'handhole',
    routePositionM: 1612,
    roadside: false,
    crew: 'crew1',
    trays: Array<number>(12).fill(24),
  },
  {
    key: 'pedestal',
    label: 'PED-03 Sloe Hill',
    kind: 'pedestal',
    routePositionM: 2048,
    roadside: true,
    crew: 'crew1',
    trays: [12],
  },
  {
    key: 'building',
    label: 'BLD-04 Old Maltings',
    kind: 'building',
    routePositionM: 2315,
    roadside: false,
    crew: 'crew1',
    trays: [12, 12],
  },
  {
    key: 'aerial',
    label: 'AER-05 Osier Walk',
    kind: 'aerial',
    routePositionM: 2786,
    roadside: false,
    crew: 'crew2',
    trays: [12, 12],
  },
  {
    key: 'other',
    label: 'OTH-06 Footbridge cabinet',
    kind: 'other',
    routePositionM: 3151,
    roadside: false,
    crew: 'crew2',
    trays: [12],
  },
]

// An invented spot on a river bend; closures sit along the route heading north-east.
const origin = { lat: 54.31274, lon: -2.87342 }

/** Seeds the demo scenario into an empty database; returns false (and writes nothing) when a project exists. */
export function seedDemo(conn: Conn, options: SeedOptions = {}): boolean {
  const sqlite = rawSqlite(conn)
  if (sqlite.prepare('SELECT 1 FROM projects LIMIT 1').get()) return false

  const cost = options.bcryptCost ?? 10
  // Hashed before the transaction: bcrypt is slow on purpose, and the write lock should not wait for it.
  const hashes = new Map(
    demoUsers.map((user) => [user.key, bcrypt.hashSync(options.passwordFor?.(user) ?? user.password, cost)]),
  )

  return writeTransaction(sqlite, (serverSeq) => {
    // Checked again under the write lock, so two processes seeding at once leave one scenario.
    if (sqlite.prepare('SELECT 1 FROM projects LIMIT 1').get()) return false
    buildScenario(conn, serverSeq, hashes)
    return true
  })
}

function buildScenario(conn: Conn, serverSeq: number, hashes: Map<DemoUser['key'], string>): void {
  const db = dbOf(conn)
  const random = mulberry32(0xc0ffee01)
  let idClock = setUpAt
  const bytes = () => Uint8Array.from({ length: 16 }, () => Math.floor(random() * 256))
  const idAt = (ms: number) => v7({ msecs: ms, random: bytes() })
  const setUpId = () => idAt((idClock += 7))

  const crewIds: Record<CrewKey, string> = { crew1: setUpId(), crew2: setUpId() }
  db.insert(crews)
    .values([
      { id: crewIds.crew1, name: 'Tallgrass Splicing, crew 1', serverSeq },
      { id: crewIds.crew2, name: 'Tallgrass Splicing, crew 2', serverSeq },
    ])
    .run()

  const userIds = Object.fromEntries(demoUsers.map((user) => [user.key, setUpId()])) as Record<
    DemoUser['key'],
    string
  >
  db.insert(users)
    .values(
      demoUsers.map((user) => ({
        id: userIds[user.key],
        email: user.email,
        name: user.name,
        role: user.role,
        crewId: user.crew ? crewIds[user.crew] : null,
        passwordHash: hashes.get(user.key) ?? '',
        createdAt: iso(setUpAt),
        serverSeq,
      })),
    )
    .run()

  const limits: ProjectLimits = structuredClone(defaultProjectLimits)
  const projectId = setUpId()
  db.insert(projects)
    .values({
      id: projectId,
      code: demoProjectCode,
      name: 'Corvell Ford FTTH, phase 1 (river side)',
      limits,
      photoRules: { ...defaultPhotoRules },
      defaultMethod: 'single_fusion',
      otdrToleranceM: 15,
      disagreementDb: 0.15,
      serverSeq,
    })
    .run()

  const cableIds = Object.fromEntries(cableSpecs.map((spec) => [spec.key, setUpId()])) as Record<
    string,
    string
  >
  db.insert(cables)
    .values(
      cableSpecs.map((spec) => ({
        id: cableIds[spec.key] as string,
        projectId,
        label: spec.label,
        fiberCount: spec.fiberCount,
        construction: spec.construction,
        fibersPerUnit: spec.fibersPerUnit,
        ribbonsPerTube: spec.ribbonsPerTube,
        fiberType: spec.fiberType,
        lengthM: spec.lengthM,
        serverSeq,
      })),
    )
    .run()
  const cable = (key: string) => cableIds[key] as string

  const closureIds: Record<string, string> = {}
  const trayLists: Record<string, PlanTray[]> = {}
  for (const spec of closureSpecs) {
    const id = setUpId()
    closureIds[spec.key] = id
    // Roughly 1 m of route per 1.1e-5° here; a little sideways wander keeps the map from looking ruled.
    const along = spec.routePositionM - 1240
    db.insert(closures)
      .values({
        id,
        projectId,
        label: spec.label,
        kind: spec.kind,
        lat: round6(origin.lat + along * 6.1e-6 + (random() - 0.5) * 2e-4),
        lon: round6(origin.lon + along * 1.02e-5 + (random() - 0.5) * 2e-4),
        routePositionM: spec.routePositionM,
        roadside: spec.roadside,
        crewId: crewIds[spec.crew],
        state: 'planned',
        serverSeq,
      })
      .run()
    const closureTrays = spec.trays.map((capacity, n) => ({ id: setUpId(), number: n + 1, capacity }))
    trayLists[spec.key] = closureTrays
    db.insert(trays)
      .values(closureTrays.map((tray) => ({ ...tray, closureId: id, serverSeq })))
      .run()
  }
  const closureId = (key: string) => closureIds[key] as string
  const traysOf = (key: string) => trayLists[key] as PlanTray[]

  // Plans: straight runs where a cable continues, ranges where one cable feeds two.
  const plans: Record<string, ReturnType<typeof rangePlan>> = {
    vault: straightPlan({
      cableA: cable('trunkA'),
      cableB: cable('trunkB'),
      fromA: 1,
      fromB: 1,
      count: 144,
      trays: traysOf('vault'),
    }),
    handhole: rangePlan(
      [
        { cableA: cable('trunkB'), cableB: cable('ds288'), fromA: 145, fromB: 1, count: 144 },
        { cableA: cable('trunkB'), cableB: cable('ds144'), fromA: 289, fromB: 1, count: 144 },
      ],
      { trays: traysOf('handhole') },
    ),
    pedestal: straightPlan({
      cableA: cable('ds288'),
      cableB: cable('drSloe'),
      fromA: 145,
      fromB: 1,
      count: 12,
      trays: traysOf('pedestal'),
    }),
    building: straightPlan({
      cableA: cable('ds144'),
      cableB: cable('drMaltings'),
      fromA: 1,
      fromB: 1,
      count: 24,
      trays: traysOf('building'),
    }),
    aerial: straightPlan({
      cableA: cable('ds288'),
      cableB: cable('drOsier'),
      fromA: 157,
      fromB: 1,
      count: 24,
      trays: traysOf('aerial'),
    }),
    other: straightPlan({
      cableA: cable('ds288'),
      cableB: cable('drFootbridge'),
      fromA: 181,
      fromB: 1,
      count: 12,
      trays: traysOf('other'),
    }),
  }
  for (const [key, rows] of Object.entries(plans)) {
    db.insert(planRows)
      .values(rows.map((row) => ({ ...row, id: setUpId(), closureId: closureId(key), serverSeq })))
      .run()
  }

  // The order of the day, as the foreman (crew 1) and the office (crew 2) set it the evening before.
  const assignedAt = iso(clockAt('06:00') - 12 * 3600_000)
  const assignments: Array<[string, DemoUser['key'], number, DemoUser['key']]> = [
    ['vault', 'splicer', 1, 'foreman'],
    ['handhole', 'splicer', 2, 'foreman'],
    ['building', 'splicer', 3, 'foreman'],
    ['pedestal', 'splicer', 4, 'foreman'],
    ['other', 'splicer2', 1, 'office'],
    ['aerial', 'splicer2', 2, 'office'],
  ]
  db.insert(closureAssignments)
    .values(
      assignments.map(([key, user, position, by]) => ({
        closureId: closureId(key),
        userId: userIds[user],
        position,
        assignedBy: userIds[by],
        assignedAt,
        serverSeq,
      })),
    )
    .run()

  // --- The day's splicing ---------------------------------------------------------------------------
  const currentByClosure = new Map<string, Map<string, NeighbourSplice>>()
  const clientIds = { splicer: idAt(clockAt('06:30')), splicer2: idAt(clockAt('06:35')) }

  interface Visit {
    key: string
    splicer: 'splicer' | 'splicer2'
    clock: number
    /** When the phone got signal and synced; null means a minute after each splice. */
    syncedAt: number | null
    reviewedBy: DemoUser['key'] | null
  }
  interface LogOptions {
    method: SpliceMethod
    lossDb: number
    gapSeconds: number
    supersedes?: string
    attempt?: number
    reason?: RespliceReason
    reasonNote?: string
    acceptReason?: string
    fiberB?: number
    notes?: string
  }

  const log = (visit: Visit, row: (typeof plans)['vault'][number], opts: LogOptions): string => {
    visit.clock += opts.gapSeconds * 1000
    const id = idAt(visit.clock)
    const cid = closureId(visit.key)
    const current = currentByClosure.get(cid) ?? new Map<string, NeighbourSplice>()
    currentByClosure.set(cid, current)
    const splice = {
      id,
      closureId: cid,
      trayId: row.trayId,
      slot: row.slot,
      cableAId: row.cableAId,
      fiberA: row.fiberA,
      cableBId: row.cableBId,
      fiberB: opts.fiberB ?? row.fiberB,
      lossDb: opts.lossDb,
      attempt: opts.attempt ?? 1,
      acceptReason: opts.acceptReason ?? null,
      supersedesId: opts.supersedes ?? null,
    }
    const { flags, needsReview } = assessSplice(splice, limits, {
      planRow: row,
      otherCurrentSplices: [...current.values()],
      closureState: 'in_progress',
    })
    insertSplice(
      conn,
      {
        ...splice,
        method: opts.method,
        respliceReason: opts.reason ?? null,
        respliceNote: opts.reasonNote ?? null,
        notes: opts.notes ?? '',
        splicedAt: iso(visit.clock),
        splicerId: userIds[visit.splicer],
        clientId: clientIds[visit.splicer],
        flags,
        reviewState: visit.reviewedBy && needsReview ? 'accepted' : null,
        createdAt: iso(visit.syncedAt ?? visit.clock + 60_000),
      },
      { serverSeq, limits },
    )
    if (opts.supersedes) current.delete(opts.supersedes)
    current.set(id, splice)
    return id
  }
  const goodLoss = (spread: number) => round3(0.005 + random() * spread)
  const rowAt = (key: string, trayNumber: number, slot: number) => {
    const tray = traysOf(key).find((t) => t.number === trayNumber) as PlanTray
    const row = plans[key]?.find((r) => r.trayId === tray.id && r.slot === slot)
    if (!row) throw new Error(`demo plan has no ${key} tray ${trayNumber} slot ${slot}`)
    return row
  }

  // 1. VLT-01: no signal below ground; the phone syncs when the crew climbs out. Tray 1 (tube 1, six ribbons).
  const vault: Visit = {
    key: 'vault',
    splicer: 'splicer',
    clock: clockAt('07:35'),
    syncedAt: clockAt('09:05'),
    reviewedBy: null,
  }
  for (let ribbon = 1; ribbon <= 6; ribbon += 1) {
    const first: string[] = []
    for (let k = 1; k <= 12; k += 1) {
      const slot = (ribbon - 1) * 12 + k
      // Ribbon 4 came out of the first arc with a dust line on its fifth fiber.
      const lossDb = ribbon === 4 && k === 5 ? 0.24 : goodLoss(0.055)
      first.push(
        log(vault, rowAt('vault', 1, slot), {
          method: 'ribbon_fusion',
          lossDb,
          gapSeconds: k === 1 ? 420 : 2,
        }),
      )
    }
    if (ribbon === 4) {
      for (let k = 1; k <= 12; k += 1) {
        log(vault, rowAt('vault', 1, 36 + k), {
          method: 'ribbon_fusion',
          lossDb: goodLoss(0.05),
          gapSeconds: k === 1 ? 540 : 2,
          supersedes: first[k - 1],
          attempt: 2,
          reason: 'dust_line',
          reasonNote:
            k === 5
              ? 'Dust line on fiber 5 after the arc; V-grooves cleaned, ribbon re-stripped and re-made.'
              : undefined,
        })
      }
    }
  }

  // 2. HH-02: trays 1–4 (TR-864-B 145–240 to DS-288 1–96), with the day's re-splices and review cases.
  const handhole: Visit = {
    key: 'handhole',
    splicer: 'splicer',
    clock: clockAt('09:30'),
    syncedAt: null,
    reviewedBy: null,
  }
  for (let trayNumber = 1; trayNumber <= 4; trayNumber += 1) {
    for (let slot = 1; slot <= 24; slot += 1) {
      const row = rowAt('handhole', trayNumber, slot)
      const gapSeconds = 80 + Math.floor(random() * 90) + (trayNumber === 3 && slot === 1 ? 2400 : 0) // lunch
      const single = { method: 'single_fusion' as const, gapSeconds }
      if (trayNumber === 1 && slot === 7) {
        const first = log(handhole, row, { ...single, lossDb: 0.38 })
        log(handhole, row, {
          ...single,
          gapSeconds: 150,
          lossDb: 0.031,
          supersedes: first,
          attempt: 2,
          reason: 'bad_cleave',
          reasonNote: 'Lip on the cleave; blade rotated.',
        })
      } else if (trayNumber === 2 && slot === 15) {
        const first = log(handhole, row, { ...single, lossDb: 0.162 })
        log(handhole, row, {
          ...single,
          gapSeconds: 140,
          lossDb: 0.036,
          supersedes: first,
          attempt: 2,
          reason: 'bubble',
        })
      } else if (trayNumber === 2 && slot === 20) {
        const first = log(handhole, row, { ...single, lossDb: 0.022 })
        log(handhole, row, {
          ...single,
          gapSeconds: 210,
          lossDb: 0.027,
          supersedes: first,
          attempt: 2,
          reason: 'fiber_break',
          reasonNote: 'Broke in the heat-shrink oven.',
        })
      } else if (trayNumber === 3 && slot === 3) {
        const first = log(handhole, row, { ...single, lossDb: 0.142 })
        const second = log(handhole, row, {
          ...single,
          gapSeconds: 160,
          lossDb: 0.121,
          supersedes: first,
          attempt: 2,
          reason: 'core_offset',
        })
        log(handhole, row, {
          ...single,
          gapSeconds: 170,
          lossDb: 0.128,
          supersedes: second,
          attempt: 3,
          reason: 'high_loss',
          acceptReason:
            'Three attempts between 0.12 and 0.14 dB; the estimate reads high across the G.652.D to G.657.A1 join. Left for OTDR.',
        })
      } else if (trayNumber === 4 && slot === 10) {
        log(handhole, row, {
          ...single,
          lossDb: 0.117,
          notes: 'Reads over target; will re-make after the tray if time allows.',
        })
      } else if (trayNumber === 4 && slot === 24) {
        // The day's one wrong pair: DS-288 fiber 108 (tube 9, yellow) taken for fiber 96 (tube 8, black) in poor light.
        log(handhole, row, { ...single, lossDb: 0.024, fiberB: 108 })
      } else {
        log(handhole, row, { ...single, lossDb: goodLoss(0.045) })
      }
    }
  }

  // 3. BLD-04: the whole riser closure, one re-splice; the foreman reviews and signs it off at the end of the day.
  const building: Visit = {
    key: 'building',
    splicer: 'splicer',
    clock: clockAt('14:05'),
    syncedAt: null,
    reviewedBy: 'foreman',
  }
  for (let trayNumber = 1; trayNumber <= 2; trayNumber += 1) {
    for (let slot = 1; slot <= 12; slot += 1) {
      const row = rowAt('building', trayNumber, slot)
      const gapSeconds = 75 + Math.floor(random() * 60)
      if (trayNumber === 2 && slot === 5) {
        const first = log(building, row, { method: 'single_fusion', gapSeconds, lossDb: 0.028 })
        log(building, row, {
          method: 'single_fusion',
          gapSeconds: 400,
          lossDb: 0.019,
          supersedes: first,
          attempt: 2,
          reason: 'macrobend',
          reasonNote: 'Fiber pinched under the tray lid; found with the light source after closing.',
        })
      } else {
        log(building, row, { method: 'single_fusion', gapSeconds, lossDb: goodLoss(0.04) })
      }
    }
  }

  // 4. PED-03: by the road, under traffic control; complete, one splice over target waits for review.
  const pedestal: Visit = {
    key: 'pedestal',
    splicer: 'splicer',
    clock: clockAt('15:20'),
    syncedAt: null,
    reviewedBy: null,
  }
  for (let slot = 1; slot <= 12; slot += 1) {
    const lossDb = slot === 9 ? 0.109 : goodLoss(0.045)
    log(pedestal, rowAt('pedestal', 1, slot), {
      method: 'single_fusion',
      gapSeconds: 70 + Math.floor(random() * 50),
      lossDb,
    })
  }

  // Crew 2 at OTH-06: eight of twelve before being called to another job. AER-05 stays untouched.
  const cabinet: Visit = {
    key: 'other',
    splicer: 'splicer2',
    clock: clockAt('09:05'),
    syncedAt: null,
    reviewedBy: null,
  }
  for (let slot = 1; slot <= 8; slot += 1) {
    log(cabinet, rowAt('other', 1, slot), {
      method: 'single_fusion',
      gapSeconds: 90 + Math.floor(random() * 80),
      lossDb: goodLoss(0.05),
    })
  }

  // --- States, sign-off, notes and the audit trail ---------------------------------------------------
  const setState = (key: string, state: ClosureState, signedOff?: { by: string; at: string }) =>
    rawSqlite(conn)
      .prepare(
        'UPDATE closures SET state = ?, signed_off_by = ?, signed_off_at = ?, server_seq = ? WHERE id = ?',
      )
      .run(state, signedOff?.by ?? null, signedOff?.at ?? null, serverSeq, closureId(key))
  for (const key of ['vault', 'handhole', 'pedestal', 'building', 'other']) setState(key, 'in_progress')
  const signedOffAt = iso(clockAt('16:40'))
  setState('building', 'signed_off', { by: userIds.foreman, at: signedOffAt })

  db.insert(notes)
    .values([
      {
        id: idAt(clockAt('07:25')),
        entity: 'closure',
        entityId: closureId('vault'),
        authorId: userIds.splicer,
        body: 'Vault pumped dry and gas-tested before entry; readings on the entry permit.',
        createdAt: iso(clockAt('09:05')),
        serverSeq,
      },
      {
        id: idAt(clockAt('16:38')),
        entity: 'closure',
        entityId: closureId('building'),
        authorId: userIds.foreman,
        body: 'Trays dressed and labelled, riser sleeve sealed. Checked against the plan and signed off.',
        createdAt: iso(clockAt('16:38')),
        serverSeq,
      },
    ])
    .run()

  const reviewed = rawSqlite(conn)
    .prepare("SELECT id FROM splices WHERE closure_id = ? AND review_state = 'accepted' ORDER BY id")
    .all(closureId('building')) as Array<{ id: string }>
  db.insert(auditLog)
    .values([
      ...reviewed.map((row) => ({
        at: iso(clockAt('16:30')),
        userId: userIds.foreman,
        entity: 'splice',
        entityId: row.id,
        field: 'reviewState',
        oldValue: null,
        newValue: 'accepted',
        outcome: 'applied' as const,
      })),
      {
        at: signedOffAt,
        userId: userIds.foreman,
        entity: 'closure',
        entityId: closureId('building'),
        field: 'state',
        oldValue: 'in_progress',
        newValue: 'signed_off',
        outcome: 'applied' as const,
      },
    ])
    .run()

  // The same roll-up the API maintains, rebuilt from rows so the seed cannot drift from it.
  recomputeProjectTotals(conn, projectId, limits)

  // The office's OTDR acceptance shots of one ribbon through the vault, imported that evening.
  seedDemoOtdr(conn, {
    projectId,
    officeUserId: userIds.office,
    at: iso(clockAt('17:30')),
    newId: setUpId,
  })
}

function round6(value: number): number {
  return Math.round(value * 1e6) / 1e6
}

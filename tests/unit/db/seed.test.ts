import bcrypt from 'bcryptjs'
import { validate, version } from 'uuid'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { writeTransaction } from '#db/client'
import { demoProjectCode, demoUsers, seedDemo } from '#db/seed'
import { closureKinds, roles } from '#shared/schemas/enums'
import { loadProjectLimits, recomputeProjectTotals } from '../../../server/repositories/splices'
import { demoOtdrFiles } from '#db/seed-otdr'
import { freshDatabase, type TestDatabase } from './support'

type Row = Record<string, unknown>

let database: TestDatabase
beforeAll(() => {
  database = freshDatabase()
  expect(seedDemo(database.db, { bcryptCost: 4 })).toBe(true)
})
afterAll(() => database.close())

const all = (sql: string, ...params: unknown[]) => database.sqlite.prepare(sql).all(...params) as Row[]
const one = (sql: string, ...params: unknown[]) => database.sqlite.prepare(sql).get(...params) as Row

describe('demo seed', () => {
  it('when the database already holds a project, then seeding again writes nothing and says so', () => {
    const counts = () =>
      one(
        'SELECT (SELECT count(*) FROM splices) AS s, (SELECT count(*) FROM users) AS u, (SELECT value FROM change_seq) AS seq',
      )
    const before = counts()
    expect(seedDemo(database.db, { bcryptCost: 4 })).toBe(false)
    expect(counts()).toEqual(before)
  })

  it('has one project with the 144, 288 and 864 fiber cables the scenario needs', () => {
    expect(all('SELECT code FROM projects')).toEqual([{ code: demoProjectCode }])
    const byCount = (n: number) => all('SELECT * FROM cables WHERE fiber_count = ?', n)
    expect(byCount(144)).toEqual([
      expect.objectContaining({ construction: 'loose_tube', fibers_per_unit: 12 }),
    ])
    expect(byCount(288)).toEqual([
      expect.objectContaining({ construction: 'loose_tube', fibers_per_unit: 12 }),
    ])
    const ribbons = byCount(864)
    expect(ribbons.length).toBeGreaterThanOrEqual(1)
    for (const ribbon of ribbons)
      expect(ribbon).toMatchObject({ construction: 'ribbon', fibers_per_unit: 12, ribbons_per_tube: 6 })
    const types = all('SELECT DISTINCT fiber_type FROM cables ORDER BY 1').map((r) => r.fiber_type)
    expect(types).toEqual(['G.652.D', 'G.657.A1'])
  })

  it('has a closure of every kind, one roadside, each with a crew, a place and a route position', () => {
    const closures = all('SELECT * FROM closures')
    expect(new Set(closures.map((c) => c.kind))).toEqual(new Set(closureKinds))
    expect(closures.filter((c) => c.roadside === 1)).toHaveLength(1)
    expect(new Set(closures.map((c) => c.crew_id)).size).toBe(2)
    for (const c of closures) {
      expect(c).toMatchObject({
        crew_id: expect.any(String),
        lat: expect.any(Number),
        lon: expect.any(Number),
      })
      expect(c.route_position_m).toBeGreaterThan(0)
    }
    const capacities = new Set(all('SELECT DISTINCT capacity FROM trays').map((t) => t.capacity))
    expect(capacities).toEqual(new Set([12, 24, 72]))
  })

  it('has one user per role, with demo passwords that verify', () => {
    const users = all('SELECT * FROM users ORDER BY email')
    expect(new Set(users.map((u) => u.role))).toEqual(new Set(roles))
    for (const demo of demoUsers) {
      const user = users.find((u) => u.email === demo.email)
      expect(user, demo.email).toBeDefined()
      expect(bcrypt.compareSync(demo.password, user!.password_hash as string)).toBe(true)
    }
  })

  it('lets a test choose the passwords', () => {
    const other = freshDatabase()
    try {
      seedDemo(other.db, { bcryptCost: 4, passwordFor: (user) => `${user.key}-pw` })
      const hash = other.sqlite
        .prepare('SELECT password_hash FROM users WHERE email = ?')
        .get(demoUsers[0]!.email) as Row
      expect(bcrypt.compareSync(`${demoUsers[0]!.key}-pw`, hash.password_hash as string)).toBe(true)
    } finally {
      other.close()
    }
  })

  it('logs a day with re-splices, over-target losses, one accepted-with-reason splice and exactly one wrong pair', () => {
    const resplices = all('SELECT * FROM splices WHERE supersedes_id IS NOT NULL')
    expect(resplices.length).toBeGreaterThan(0)
    expect(new Set(resplices.map((s) => s.resplice_reason)).size).toBeGreaterThanOrEqual(4)
    const superseded = one('SELECT count(*) AS n FROM splices WHERE is_current = 0').n
    expect(superseded).toBe(resplices.length)

    const overTarget = one('SELECT count(*) AS n FROM splices WHERE is_current = 1 AND loss_db > 0.1005').n
    expect(overTarget).toBeGreaterThan(0)
    const accepted = all('SELECT * FROM splices WHERE accept_reason IS NOT NULL')
    expect(accepted).toEqual([expect.objectContaining({ attempt: 3, is_current: 1 })])

    const wrongPairs = all(
      `SELECT s.* FROM splices s JOIN plan_rows p ON p.tray_id = s.tray_id AND p.slot = s.slot
       WHERE s.is_current = 1 AND NOT (p.cable_a_id = s.cable_a_id AND p.fiber_a = s.fiber_a
         AND p.cable_b_id = s.cable_b_id AND p.fiber_b = s.fiber_b)`,
    )
    expect(wrongPairs).toHaveLength(1)
    expect(JSON.parse(wrongPairs[0]!.flags as string)).toContain('plan_mismatch')
    expect(one('SELECT sum(mismatches) AS m, sum(off_plan) AS o FROM closure_totals')).toEqual({ m: 1, o: 1 })

    const splicer = one("SELECT id FROM users WHERE role = 'splicer' AND email LIKE 'maren%'").id
    const days = all(
      'SELECT DISTINCT substr(spliced_at, 1, 10) AS day FROM splices WHERE splicer_id = ?',
      splicer,
    )
    expect(days).toHaveLength(1)
  })

  it('has one closure complete and signed off by the foreman, and one untouched', () => {
    const foreman = one("SELECT id FROM users WHERE role = 'foreman'").id
    const signedOff = all(
      "SELECT c.*, t.completion_pct FROM closures c JOIN closure_totals t ON t.closure_id = c.id WHERE state = 'signed_off'",
    )
    expect(signedOff).toEqual([
      expect.objectContaining({
        signed_off_by: foreman,
        completion_pct: 100,
        signed_off_at: expect.any(String),
      }),
    ])
    const untouched = all(
      "SELECT c.* FROM closures c WHERE state = 'planned' AND NOT EXISTS (SELECT 1 FROM splices s WHERE s.closure_id = c.id)",
    )
    expect(untouched).toHaveLength(1)
    expect(
      one("SELECT count(*) AS n FROM audit_log WHERE field = 'state' AND new_value = '\"signed_off\"'").n,
    ).toBe(1)
  })

  it('gives splices UUIDv7 ids and closure totals equal to a recompute from rows', () => {
    for (const { id } of all('SELECT id FROM splices')) {
      expect(validate(id as string) && version(id as string)).toBe(7)
    }
    const before = all('SELECT * FROM closure_totals ORDER BY closure_id')
    const projectId = one('SELECT id FROM projects').id as string
    writeTransaction(database.sqlite, () =>
      recomputeProjectTotals(database.db, projectId, loadProjectLimits(database.db, projectId)!),
    )
    expect(all('SELECT * FROM closure_totals ORDER BY closure_id')).toEqual(before)
  })

  it('is reproducible: a second database gets the same ids, losses and times', () => {
    const other = freshDatabase()
    try {
      seedDemo(other.db, { bcryptCost: 4 })
      const sql = 'SELECT id, loss_db, spliced_at, tray_id, slot, flags FROM splices ORDER BY id'
      expect(other.sqlite.prepare(sql).all()).toEqual(all(sql))
    } finally {
      other.close()
    }
  })

  it('stamps every seeded row with the one change sequence value of its transaction', () => {
    const tables = [
      'crews',
      'users',
      'projects',
      'cables',
      'closures',
      'trays',
      'plan_rows',
      'splices',
      'notes',
    ]
    const seqs = tables.flatMap((table) =>
      all(`SELECT DISTINCT server_seq FROM ${table}`).map((r) => r.server_seq),
    )
    expect(new Set(seqs)).toEqual(new Set([1]))
  })

  it('has OTDR shots of TR-864-A fibers 13–24 through VLT-01, imported by the office, with every case the reconciliation shows', () => {
    const imports = all('SELECT file_name, trace_count, imported_by FROM otdr_imports ORDER BY file_name')
    expect(imports.map((i) => i.file_name)).toEqual(
      [demoOtdrFiles.fromHandhole, demoOtdrFiles.fromHub].sort(),
    )
    const office = one("SELECT id FROM users WHERE role = 'office'").id
    expect(imports.every((i) => i.imported_by === office)).toBe(true)
    const results = all(
      `SELECT s.fiber_a AS fiber, r.wavelength_nm AS w, r.kind, r.ab_db AS ab, r.ba_db AS ba, r.average_db AS avg, c.label
         FROM otdr_splice_results r JOIN splices s ON s.id = r.splice_id JOIN closures c ON c.id = r.closure_id ORDER BY fiber, w`,
    )
    expect(new Set(results.map((r) => r.label))).toEqual(new Set(['VLT-01 Weir Road']))
    expect(new Set(results.map((r) => r.fiber))).toEqual(
      new Set(Array.from({ length: 12 }, (_, i) => 13 + i)),
    )
    // 12 fibers × 2 wavelengths, less fiber 24 at 1310 nm (not shot yet).
    expect(results).toHaveLength(23)
    const at = (fiber: number, w: number) => results.find((r) => r.fiber === fiber && r.w === w)
    // A gainer from A: −0.05 and +0.25 average 0.10 (REFERENCE.md §3, computed).
    expect(at(17, 1310)).toMatchObject({ kind: 'average', ab: -0.05, ba: 0.25 })
    expect(at(17, 1310)!.avg as number).toBeCloseTo(0.1, 9)
    expect(at(19, 1550)).toMatchObject({ kind: 'one_way', ba: null, avg: null })
    expect(at(21, 1310)).toMatchObject({ kind: 'both_negative', avg: null })
    expect(at(15, 1550)!.avg as number).toBeCloseTo(0.19, 9)
    expect(at(24, 1310)).toBeUndefined()
    const bends = all("SELECT route_position_m AS at FROM otdr_events WHERE match = 'unmatched'")
    expect(bends).toEqual([{ at: 702 }, { at: 702 }])
    // Imported inside the seed's one transaction: no change sequence value of its own (see tests/api/sync.pull.test.ts).
    const other = freshDatabase()
    try {
      seedDemo(other.db, { bcryptCost: 4 })
      expect(other.sqlite.prepare('SELECT value FROM change_seq WHERE id = 1').pluck().get()).toBe(1)
    } finally {
      other.close()
    }
  })
})

import fc from 'fast-check'
import { v7 } from 'uuid'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { writeTransaction } from '#db/client'
import { type FiberPair, type SlottedPair, validatePlan } from '#shared/domain/plan'
import { type RollupSplice, rollUpClosure, totalsOf } from '#shared/domain/rollup'
import { type RespliceReason, respliceReasons } from '#shared/schemas/enums'
import type { ProjectLimits } from '#shared/schemas/project'
import { closureRollup } from '../../../server/repositories/board'
import {
  insertPhotoLink,
  insertSplice,
  PendingTotals,
  recomputeClosureTotals,
  recomputeProjectTotals,
  type SpliceInput,
} from '../../../server/repositories/splices'
import {
  addPlanRow,
  buildProject,
  type ClosureFixture,
  freshDatabase,
  type TestDatabase,
  testLimits,
} from './support'

// shared/ is the contract: the closure_totals row the server keeps one splice at a time, and the one it
// rebuilds from rows, must read as the phone's rollUpClosure over the same rows, in any order of arrival.

let database: TestDatabase
beforeAll(() => {
  database = freshDatabase()
})
afterAll(() => database.close())

// A second set of limits moves the lines (and accepts with a flag from attempt 2): no threshold is built in.
const looserLimits: ProjectLimits = {
  estimate: { standardMaxDb: 0.5, contractTargetDb: 0.15 },
  perWavelength: [],
  attemptsBeforeAcceptWithFlag: 2,
}

/** A fiber end: cable 0 or 1 of the fixture, fiber 1–24. */
const endArb = fc.record({ cable: fc.constantFrom(0, 1), fiber: fc.integer({ min: 1, max: 24 }) })
/** A tray slot, taken modulo the closure's trays and their capacities. */
const slotArb = fc.record({ tray: fc.nat(), slot: fc.nat() })

// Where a splice goes and what it joins, relative to the plan (plan rows picked modulo the plan's length).
const placementArb = fc.oneof(
  {
    weight: 4,
    arbitrary: fc.record({ kind: fc.constant('planned' as const), row: fc.nat(), swap: fc.boolean() }),
  },
  {
    weight: 1,
    arbitrary: fc.record({
      kind: fc.constant('rightPairWrongSlot' as const),
      row: fc.nat(),
      swap: fc.boolean(),
      at: slotArb,
    }),
  },
  {
    weight: 1,
    arbitrary: fc.record({
      kind: fc.constant('otherPlannedPair' as const),
      row: fc.nat(),
      other: fc.nat(),
      swap: fc.boolean(),
    }),
  },
  {
    weight: 1,
    arbitrary: fc.record({
      kind: fc.constant('offPlanAtPlannedSlot' as const),
      row: fc.nat(),
      a: endArb,
      b: endArb,
    }),
  },
  {
    weight: 1,
    arbitrary: fc.record({ kind: fc.constant('offPlan' as const), a: endArb, b: endArb, at: slotArb }),
  },
)
type Placement = typeof placementArb extends fc.Arbitrary<infer T> ? T : never

const lossArb = fc.option(
  fc.oneof(
    // On and just past each line of both limit sets, and the ends of the range.
    fc.constantFrom(0.1, 0.099, 0.101, 0.15, 0.151, 0.3, 0.301, 0.5, 0.501, -0.1, 0.6, 0),
    fc.integer({ min: -100, max: 600 }).map((n) => n / 1000),
    // Half thousandths, which the API refuses but the repository must still round as toMilliDb does
    // (halves towards +∞, where SQLite's round() goes away from zero).
    fc.constantFrom(-0.0025, -0.0005, 0.0015, 0.1005, 0.3005),
  ),
  { nil: null, freq: 6 },
)

const spliceSpecArb = fc.record({
  // Re-splices one of the specs before it (modulo); two re-splices of one attempt happen too.
  parent: fc.option(fc.nat(), { nil: null, freq: 2 }),
  // A re-splice usually re-makes the same joint, sometimes written the other way round, sometimes elsewhere.
  redo: fc.constantFrom('same', 'same', 'swapped', 'moved'),
  placement: placementArb,
  lossDb: lossArb,
  acceptReason: fc.option(fc.constantFrom('Customer accepted the loss', 'No slack left', '  '), {
    nil: null,
    freq: 2,
  }),
  reason: fc.constantFrom(...respliceReasons),
  // Arrival order: lowest first among the specs whose superseded attempt has arrived.
  priority: fc.nat(1000),
})

const scenarioArb = fc.record({
  trays: fc.array(fc.integer({ min: 2, max: 6 }), { minLength: 1, maxLength: 3 }),
  plan: fc.array(fc.record({ at: slotArb, a: endArb, b: endArb }), { maxLength: 18 }),
  limits: fc.constantFrom(testLimits, looserLimits),
  splices: fc.array(spliceSpecArb, { minLength: 1, maxLength: 28 }),
  // Photo links land after `after` splices have arrived, possibly before their own splice (no foreign key).
  photos: fc.array(fc.record({ target: fc.nat(), after: fc.nat() }), { maxLength: 12 }),
  recomputeAfter: fc.option(fc.nat(), { nil: null }),
})
type Scenario = typeof scenarioArb extends fc.Arbitrary<infer T> ? T : never

const swapped = (p: FiberPair): FiberPair => ({
  cableAId: p.cableBId,
  fiberA: p.fiberB,
  cableBId: p.cableAId,
  fiberB: p.fiberA,
})

/** Plan rows from the drawn ones, dropping any that would reuse a slot or a fiber (validatePlan passes). */
function validPlan(fixture: ClosureFixture, scenario: Scenario): SlottedPair[] {
  const cables = [fixture.cableA, fixture.cableB]
  const usedSlots = new Set<string>()
  const usedEnds = new Set<string>()
  const rows: SlottedPair[] = []
  for (const drawn of scenario.plan) {
    const t = drawn.at.tray % scenario.trays.length
    const slot = (drawn.at.slot % (scenario.trays[t] as number)) + 1
    const trayId = fixture.trayIds[t] as string
    const ends = [`${drawn.a.cable}#${drawn.a.fiber}`, `${drawn.b.cable}#${drawn.b.fiber}`]
    if (usedSlots.has(`${t}#${slot}`) || ends[0] === ends[1] || ends.some((e) => usedEnds.has(e))) continue
    usedSlots.add(`${t}#${slot}`)
    ends.forEach((e) => usedEnds.add(e))
    rows.push({
      trayId,
      slot,
      cableAId: cables[drawn.a.cable] as string,
      fiberA: drawn.a.fiber,
      cableBId: cables[drawn.b.cable] as string,
      fiberB: drawn.b.fiber,
    })
  }
  return rows
}

function place(
  fixture: ClosureFixture,
  scenario: Scenario,
  plan: SlottedPair[],
  placement: Placement,
): SlottedPair {
  const cables = [fixture.cableA, fixture.cableB]
  const slotAt = (at: { tray: number; slot: number }) => {
    const t = at.tray % scenario.trays.length
    return { trayId: fixture.trayIds[t] as string, slot: (at.slot % (scenario.trays[t] as number)) + 1 }
  }
  const pairOf = (a: { cable: number; fiber: number }, b: { cable: number; fiber: number }): FiberPair => ({
    cableAId: cables[a.cable] as string,
    fiberA: a.fiber,
    cableBId: cables[b.cable] as string,
    fiberB: b.fiber,
  })
  if (placement.kind === 'offPlan') return { ...slotAt(placement.at), ...pairOf(placement.a, placement.b) }
  const row = plan[placement.row % Math.max(1, plan.length)]
  // An empty plan leaves only off-plan splices to make.
  if (!row)
    return {
      ...slotAt({ tray: placement.row, slot: placement.row }),
      ...pairOf({ cable: 0, fiber: 24 }, { cable: 1, fiber: 24 }),
    }
  const at = { trayId: row.trayId, slot: row.slot }
  switch (placement.kind) {
    case 'planned':
      return { ...at, ...(placement.swap ? swapped(row) : row) }
    case 'rightPairWrongSlot':
      return { ...(placement.swap ? swapped(row) : row), ...slotAt(placement.at) }
    case 'otherPlannedPair': {
      const other = plan[placement.other % plan.length] as SlottedPair
      return { ...(placement.swap ? swapped(other) : other), ...at }
    }
    case 'offPlanAtPlannedSlot':
      return { ...at, ...pairOf(placement.a, placement.b) }
  }
}

/** Turns the drawn specs into splice inputs (a re-splice always after its attempt in the list). */
function buildSplices(
  fixture: ClosureFixture,
  scenario: Scenario,
  plan: SlottedPair[],
): Array<SpliceInput & { priority: number; parent: number | null }> {
  const made: Array<SpliceInput & { priority: number; parent: number | null }> = []
  scenario.splices.forEach((spec, k) => {
    const parent = spec.parent !== null && k > 0 ? spec.parent % k : null
    const old = parent === null ? undefined : made[parent]
    let at: SlottedPair
    if (old && spec.redo !== 'moved') {
      const { trayId, slot, cableAId, fiberA, cableBId, fiberB } = old
      const same = { trayId, slot, cableAId, fiberA, cableBId, fiberB }
      at = spec.redo === 'swapped' ? { ...same, ...swapped(same) } : same
    } else {
      at = place(fixture, scenario, plan, spec.placement)
    }
    made.push({
      id: v7(),
      closureId: fixture.closureId,
      ...at,
      method: 'single_fusion',
      lossDb: spec.lossDb,
      attempt: old ? (old.attempt ?? 1) + 1 : 1,
      respliceReason: old ? (spec.reason as RespliceReason) : null,
      supersedesId: old?.id ?? null,
      acceptReason: spec.acceptReason,
      splicedAt: '2025-06-10T08:00:00.000Z',
      splicerId: fixture.userId,
      clientId: 'parity-client',
      createdAt: new Date(Date.UTC(2025, 5, 10, 6, k)).toISOString(),
      priority: spec.priority,
      parent,
    })
  })
  return made
}

/** A random arrival order in which every re-splice comes after the attempt it supersedes. */
function arrivalOrder(splices: Array<{ priority: number; parent: number | null }>): number[] {
  const order: number[] = []
  const arrived = new Set<number>()
  while (order.length < splices.length) {
    let next = -1
    splices.forEach((s, i) => {
      if (arrived.has(i) || (s.parent !== null && !arrived.has(s.parent))) return
      if (next < 0 || s.priority < (splices[next] as { priority: number }).priority) next = i
    })
    order.push(next)
    arrived.add(next)
  }
  return order
}

type Row = Record<string, unknown>

/** The closure's rows as the phone holds them, rolled up by the shared functions. */
function sharedRollup(closureId: string, limits: ProjectLimits) {
  const all = <T>(sql: string, ...params: unknown[]) => database.sqlite.prepare(sql).all(...params) as T[]
  const plan = all<Row>('SELECT * FROM plan_rows WHERE closure_id = ? AND deleted = 0', closureId).map(
    (r): SlottedPair => ({
      trayId: r.tray_id as string,
      slot: r.slot as number,
      cableAId: r.cable_a_id as string,
      fiberA: r.fiber_a as number,
      cableBId: r.cable_b_id as string,
      fiberB: r.fiber_b as number,
    }),
  )
  const splices = all<Row>('SELECT * FROM splices WHERE closure_id = ? AND deleted = 0', closureId).map(
    (s): RollupSplice => ({
      id: s.id as string,
      trayId: s.tray_id as string,
      slot: s.slot as number,
      cableAId: s.cable_a_id as string,
      fiberA: s.fiber_a as number,
      cableBId: s.cable_b_id as string,
      fiberB: s.fiber_b as number,
      lossDb: s.loss_db as number | null,
      attempt: s.attempt as number,
      acceptReason: s.accept_reason as string | null,
      supersedesId: s.supersedes_id as string | null,
    }),
  )
  const perSplice = Object.fromEntries(
    all<{ entity_id: string; n: number }>(
      `SELECT entity_id, count(*) AS n FROM photo_links WHERE entity = 'splice' AND deleted = 0
       GROUP BY entity_id`,
    ).map((r) => [r.entity_id, r.n]),
  )
  return {
    rollup: rollUpClosure(plan, splices, limits, { photoCounts: { perSplice } }),
    withLoss: totalsOf(splices, limits).withLoss,
  }
}

const close = (got: number | null, want: number | null) =>
  got === null || want === null ? got === want : Math.abs(got - want) <= 1e-9

function expectParity(closureId: string, limits: ProjectLimits, when: string): void {
  const { rollup: want, withLoss } = sharedRollup(closureId, limits)
  const got = closureRollup(database.db, closureId)
  if (!got) throw new Error(`no closure_totals row for ${closureId}`)
  expect(
    {
      planned: got.planned,
      logged: got.logged,
      offPlan: got.offPlan,
      mismatches: got.mismatches,
      completionPct: got.completionPct,
      resplices: got.resplices,
      overTarget: got.overTarget,
      overMaximum: got.overMaximum,
      photos: got.photos,
      lossCount: got.lossCount,
    },
    when,
  ).toEqual({
    planned: want.planned,
    logged: want.logged,
    offPlan: want.offPlan,
    mismatches: want.mismatches,
    completionPct: want.completionPct,
    resplices: want.resplices,
    overTarget: want.overTarget,
    overMaximum: want.overMaximum,
    photos: want.photos,
    lossCount: withLoss,
  })
  const losses = { sum: got.lossSum, mean: got.lossMean, max: got.lossMax }
  const wanted = { sum: want.totalLossDb, mean: want.meanLossDb, max: want.maxLossDb }
  const agree =
    close(losses.sum, wanted.sum) && close(losses.mean, wanted.mean) && close(losses.max, wanted.max)
  expect(agree, `${when}: losses ${JSON.stringify(losses)} vs shared ${JSON.stringify(wanted)}`).toBe(true)
}

function runScenario(scenario: Scenario): void {
  const { limits } = scenario
  const fixture = buildProject(database, { trays: scenario.trays, limits })
  const { closureId } = fixture
  const plan = validPlan(fixture, scenario)
  const refs = {
    cables: [fixture.cableA, fixture.cableB].map((id) => ({ id, fiberCount: 24 })),
    trays: fixture.trayIds.map((id, i) => ({ id, number: i + 1, capacity: scenario.trays[i] as number })),
  }
  expect(validatePlan(plan, refs)).toEqual([])
  writeTransaction(database.sqlite, (serverSeq) => {
    for (const row of plan) addPlanRow(database, { closureId, ...row }, serverSeq)
    // Plan writes re-judge the closure from rows, as the plan service does.
    recomputeClosureTotals(database.sqlite, closureId, limits)
  })
  expectParity(closureId, limits, 'after the plan')

  const splices = buildSplices(fixture, scenario, plan)
  const order = arrivalOrder(splices)
  const recomputeAt = scenario.recomputeAfter === null ? -1 : scenario.recomputeAfter % splices.length
  for (let step = 0; step <= order.length; step += 1) {
    for (const photo of scenario.photos) {
      if (photo.after % (order.length + 1) !== step) continue
      const target = splices[photo.target % splices.length] as SpliceInput
      writeTransaction(database.sqlite, (serverSeq) =>
        insertPhotoLink(
          database.sqlite,
          {
            id: v7(),
            sha256: 'b'.repeat(64),
            entity: 'splice',
            entityId: target.id,
            addedBy: fixture.userId,
          },
          { serverSeq },
        ),
      )
      expectParity(
        closureId,
        limits,
        `after a photo of splice ${photo.target % splices.length} at step ${step}`,
      )
    }
    if (step === order.length) break
    const { priority: _p, parent: _q, ...splice } = splices[order[step] as number]!
    writeTransaction(database.sqlite, (serverSeq) =>
      insertSplice(database.sqlite, splice, { serverSeq, limits }),
    )
    expectParity(closureId, limits, `after splice ${order[step]} at step ${step}`)
    if (step === recomputeAt) {
      // Increments then go on from a rebuilt row, so both must keep the columns in one form.
      writeTransaction(database.sqlite, () => recomputeClosureTotals(database.sqlite, closureId, limits))
      expectParity(closureId, limits, `after a recompute at step ${step}`)
    }
  }
  writeTransaction(database.sqlite, () => recomputeClosureTotals(database.sqlite, closureId, limits))
  expectParity(closureId, limits, 'after recomputeClosureTotals')
  writeTransaction(database.sqlite, () => recomputeProjectTotals(database.sqlite, fixture.projectId, limits))
  expectParity(closureId, limits, 'after recomputeProjectTotals')
}

/**
 * The same arrivals written the way a push batch writes them: several splices per transaction, each in a
 * savepoint of its own, their totals deltas held back and written once when the batch settles; now and
 * then a splice whose savepoint is rolled back after its deltas were staged (a refused mutation).
 */
function runBatchedScenario(scenario: Scenario, batchSizes: number[], refusedAt: number[]): void {
  const { limits } = scenario
  const fixture = buildProject(database, { trays: scenario.trays, limits })
  const { closureId } = fixture
  const plan = validPlan(fixture, scenario)
  writeTransaction(database.sqlite, (serverSeq) => {
    for (const row of plan) addPlanRow(database, { closureId, ...row }, serverSeq)
    recomputeClosureTotals(database.sqlite, closureId, limits)
  })
  const splices = buildSplices(fixture, scenario, plan)
  const order = arrivalOrder(splices)
  const refused = new Set(refusedAt.map((n) => n % (order.length + 1)))
  let step = 0
  for (let b = 0; step < order.length; b += 1) {
    const size = 1 + ((batchSizes[b % Math.max(1, batchSizes.length)] ?? 0) % 8)
    const pending = new PendingTotals()
    const first = step
    writeTransaction(database.sqlite, () => {
      for (; step < Math.min(first + size, order.length); step += 1) {
        const { priority: _p, parent: _q, ...splice } = splices[order[step] as number]!
        if (refused.has(step)) {
          // Staged, then thrown away with its savepoint: the totals must not keep any of it.
          expect(() =>
            writeTransaction(database.sqlite, (serverSeq) => {
              insertSplice(database.sqlite, { ...splice, id: v7() }, { serverSeq, limits, pending })
              throw new Error('refused after writing')
            }),
          ).toThrow('refused after writing')
          pending.dropStaged()
        }
        writeTransaction(database.sqlite, (serverSeq) =>
          insertSplice(database.sqlite, splice, { serverSeq, limits, pending }),
        )
        pending.keepStaged()
      }
      pending.flush(database.sqlite)
    })
    expectParity(closureId, limits, `after the batch ending at step ${step}`)
  }
}

describe('closure_totals against the shared rollUpClosure', () => {
  it('when splices arrive in push batches with deferred totals and refused attempts, then the row equals rollUpClosure', () => {
    const batched = fc.record({
      scenario: scenarioArb,
      batchSizes: fc.array(fc.nat(), { minLength: 1, maxLength: 6 }),
      refusedAt: fc.array(fc.nat(), { maxLength: 4 }),
    })
    fc.assert(
      fc.property(batched, ({ scenario, batchSizes, refusedAt }) =>
        runBatchedScenario(scenario, batchSizes, refusedAt),
      ),
      { numRuns: 150 },
    )
  })

  it('when splices, re-splices and photos arrive in any valid order, then both paths equal rollUpClosure', () => {
    fc.assert(fc.property(scenarioArb, runScenario), { numRuns: 200 })
  })

  it('counts pairs wherever they sit in the closure and judges slots apart', () => {
    // Tray of 4: slot 1 plans A1–B1, slot 2 plans A2–B2, slot 3 plans A3–B3, slot 4 is left empty.
    const fixture = buildProject(database, { trays: [4] })
    const [trayId] = fixture.trayIds as [string]
    const pair = (a: number, b: number) => ({
      cableAId: fixture.cableA,
      fiberA: a,
      cableBId: fixture.cableB,
      fiberB: b,
    })
    writeTransaction(database.sqlite, (serverSeq) => {
      for (const slot of [1, 2, 3])
        addPlanRow(database, { closureId: fixture.closureId, trayId, slot, ...pair(slot, slot) }, serverSeq)
      recomputeClosureTotals(database.sqlite, fixture.closureId, testLimits)
    })
    const splice = (slot: number, joins: FiberPair, extra: Partial<SpliceInput> = {}): SpliceInput => ({
      id: v7(),
      closureId: fixture.closureId,
      trayId,
      slot,
      ...joins,
      method: 'single_fusion',
      lossDb: 0.1,
      splicedAt: '2025-06-10T08:00:00.000Z',
      splicerId: fixture.userId,
      clientId: 'parity-client',
      ...extra,
    })
    // A1–B1 written B→A in slot 4: logged, not off the plan, but a mismatch (slot 4 has no row).
    const moved = splice(4, swapped(pair(1, 1)))
    // A2–B2 in slot 3, where A3–B3 is planned: logged and a mismatch. A5–B5 in slot 2: off the plan, a mismatch.
    const crossed = splice(3, pair(2, 2), { lossDb: 0.35 })
    const stray = splice(2, pair(5, 5), { lossDb: null })
    writeTransaction(database.sqlite, (serverSeq) => {
      for (const s of [moved, crossed, stray])
        insertSplice(database.sqlite, s, { serverSeq, limits: testLimits })
    })
    expect(closureRollup(database.db, fixture.closureId)).toMatchObject({
      planned: 3,
      logged: 2,
      offPlan: 1,
      mismatches: 3,
      completionPct: 66.7,
      overTarget: 1,
      overMaximum: 1,
      lossSum: 0.45,
      lossMax: 0.35,
      lossMean: 0.225,
    })
    // Re-making A2–B2 in its own slot leaves it logged once and clears a mismatch.
    writeTransaction(database.sqlite, (serverSeq) =>
      insertSplice(
        database.sqlite,
        splice(2, pair(2, 2), { supersedesId: crossed.id, attempt: 2, respliceReason: 'high_loss' }),
        {
          serverSeq,
          limits: testLimits,
        },
      ),
    )
    expect(closureRollup(database.db, fixture.closureId)).toMatchObject({
      logged: 2,
      mismatches: 2,
      resplices: 1,
    })
    expectParity(fixture.closureId, testLimits, 'after the re-splice')
  })
})

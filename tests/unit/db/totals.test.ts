import fc from 'fast-check'
import { v7 } from 'uuid'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { writeTransaction } from '#db/client'
import { closureRollup } from '../../../server/repositories/board'
import {
  insertPhotoLink,
  insertSplice,
  recomputeClosureTotals,
  recomputeProjectTotals,
  type SpliceInput,
  SpliceWriteError,
} from '../../../server/repositories/splices'
import {
  addPlanRow,
  buildProject,
  type ClosureFixture,
  freshDatabase,
  type TestDatabase,
  testLimits,
  totalsRow,
} from './support'

let database: TestDatabase
beforeAll(() => {
  database = freshDatabase()
})
afterAll(() => database.close())

interface Pair {
  cableAId: string
  fiberA: number
  cableBId: string
  fiberB: number
}

// Two trays of six slots; slots 5 and 6 of tray 2 are left off the plan so off-plan splices happen.
function plannedClosure(): { fixture: ClosureFixture; plan: Map<string, Pair> } {
  const fixture = buildProject(database)
  const plan = new Map<string, Pair>()
  writeTransaction(database.sqlite, (seq) => {
    fixture.trayIds.forEach((trayId, t) => {
      for (let slot = 1; slot <= 6; slot += 1) {
        if (t === 1 && slot >= 5) continue
        const fiber = t * 6 + slot
        const pair = { cableAId: fixture.cableA, fiberA: fiber, cableBId: fixture.cableB, fiberB: fiber }
        addPlanRow(database, { closureId: fixture.closureId, trayId, slot, ...pair }, seq)
        plan.set(`${trayId}#${slot}`, pair)
      }
    })
    // Plan writes re-judge the closure from rows, as the plan service does.
    recomputeClosureTotals(database.sqlite, fixture.closureId, testLimits)
  })
  return { fixture, plan }
}

function spliceFor(
  fixture: ClosureFixture,
  at: { trayId: string; slot: number },
  pair: Pair,
  extra: Partial<SpliceInput> = {},
): SpliceInput {
  return {
    id: v7(),
    closureId: fixture.closureId,
    trayId: at.trayId,
    slot: at.slot,
    ...pair,
    method: 'single_fusion',
    lossDb: 0.02,
    attempt: 1,
    splicedAt: '2025-06-10T08:00:00.000Z',
    splicerId: fixture.userId,
    clientId: 'client-1',
    ...extra,
  }
}

const lossArb = fc.option(
  fc.oneof(
    fc.constantFrom(0.1, 0.3, 0.1005, 0.301, 0.101),
    fc.integer({ min: -30, max: 450 }).map((n) => n / 1000),
  ),
  { nil: null, freq: 6 },
)
const pairVariant = fc.constantFrom('planned', 'swapped', 'wrongFiber', 'planned', 'planned')
const op = fc.oneof(
  fc.record({
    kind: fc.constant('new' as const),
    tray: fc.nat(1),
    slot: fc.integer({ min: 1, max: 6 }),
    variant: pairVariant,
    loss: lossArb,
    minute: fc.nat(600),
  }),
  fc.record({
    kind: fc.constant('resplice' as const),
    target: fc.nat(),
    moveTo: fc.option(fc.record({ tray: fc.nat(1), slot: fc.integer({ min: 1, max: 6 }) }), { freq: 4 }),
    variant: pairVariant,
    loss: lossArb,
    minute: fc.nat(600),
  }),
  fc.record({ kind: fc.constant('photo' as const), target: fc.nat() }),
)

type Row = Record<string, unknown>

/** The roll-up by the rules, from the rows in plain TypeScript: a second oracle, independent of the SQL. */
function modelTotals(closureId: string): Row {
  const all = database.sqlite
    .prepare('SELECT * FROM splices WHERE closure_id = ? AND deleted = 0')
    .all(closureId) as Row[]
  const plan = database.sqlite
    .prepare('SELECT * FROM plan_rows WHERE closure_id = ? AND deleted = 0')
    .all(closureId) as Row[]
  const linked = new Set(
    (
      database.sqlite
        .prepare("SELECT entity_id FROM photo_links WHERE entity = 'splice' AND deleted = 0")
        .all() as Row[]
    ).map((r) => r.entity_id),
  )
  const same = (x: Row, y: Row) =>
    (x.cable_a_id === y.cable_a_id &&
      x.fiber_a === y.fiber_a &&
      x.cable_b_id === y.cable_b_id &&
      x.fiber_b === y.fiber_b) ||
    (x.cable_a_id === y.cable_b_id &&
      x.fiber_a === y.fiber_b &&
      x.cable_b_id === y.cable_a_id &&
      x.fiber_b === y.fiber_a)
  const current = all.filter((s) => s.is_current === 1)
  const rowAt = (s: Row) => plan.find((p) => p.tray_id === s.tray_id && p.slot === s.slot)
  // Pairs count wherever they sit in the closure; slots only decide mismatches (shared rollUpClosure).
  const losses = current.map((s) => s.loss_db).filter((l): l is number => l !== null)
  const milli = losses.map((l) => Math.round(l * 1000))
  return {
    planned: plan.length,
    logged: plan.filter((p) => current.some((s) => same(s, p))).length,
    off_plan: current.filter((s) => !plan.some((p) => same(s, p))).length,
    mismatches: current.filter((s) => {
      const p = rowAt(s)
      return !p || !same(s, p)
    }).length,
    loss_count: losses.length,
    loss_sum: milli.reduce((a, b) => a + b, 0) / 1000,
    loss_max: milli.length ? Math.max(...milli) / 1000 : null,
    over_target: losses.filter((l) => l > 0.1 + 5e-4).length,
    over_maximum: losses.filter((l) => l > 0.3 + 5e-4).length,
    resplices: all.length - current.length,
    photos: current.filter((s) => linked.has(s.id)).length,
    last_activity_at: all.length
      ? all
          .map((s) => s.created_at as string)
          .sort()
          .at(-1)
      : null,
  }
}

describe('closure totals kept by insertSplice', () => {
  it('when splices, re-splices and photos arrive in any order, then the totals equal a full recompute', () => {
    fc.assert(
      fc.property(fc.array(op, { minLength: 1, maxLength: 30 }), (ops) => {
        const { fixture, plan } = plannedClosure()
        const ids: string[] = []
        const pairs = new Map<string, Pair & { trayId: string; slot: number }>()
        const pick = (variant: string, trayId: string, slot: number): Pair => {
          const planned = plan.get(`${trayId}#${slot}`) ?? {
            cableAId: fixture.cableA,
            fiberA: 20,
            cableBId: fixture.cableB,
            fiberB: 20,
          }
          if (variant === 'swapped')
            return {
              cableAId: planned.cableBId,
              fiberA: planned.fiberB,
              cableBId: planned.cableAId,
              fiberB: planned.fiberA,
            }
          if (variant === 'wrongFiber') return { ...planned, fiberB: (planned.fiberB % 24) + 1 }
          return planned
        }
        for (const step of ops) {
          writeTransaction(database.sqlite, (serverSeq) => {
            const createdAt = new Date(
              Date.UTC(2025, 5, 10, 6) + ('minute' in step ? step.minute : 0) * 60_000,
            ).toISOString()
            if (step.kind === 'new') {
              const at = { trayId: fixture.trayIds[step.tray] as string, slot: step.slot }
              const splice = spliceFor(fixture, at, pick(step.variant, at.trayId, at.slot), {
                lossDb: step.loss,
                createdAt,
              })
              insertSplice(database.sqlite, splice, { serverSeq, limits: testLimits })
              ids.push(splice.id)
              pairs.set(splice.id, { ...pick(step.variant, at.trayId, at.slot), ...at })
            } else if (step.kind === 'resplice' && ids.length > 0) {
              const old = pairs.get(ids[step.target % ids.length] as string)!
              const at = step.moveTo
                ? { trayId: fixture.trayIds[step.moveTo.tray] as string, slot: step.moveTo.slot }
                : old
              const { trayId: _t, slot: _s, ...oldPair } = old
              const pair =
                step.variant === 'planned' && !step.moveTo ? oldPair : pick(step.variant, at.trayId, at.slot)
              const splice = spliceFor(fixture, at, pair, {
                lossDb: step.loss,
                createdAt,
                attempt: 2,
                supersedesId: ids[step.target % ids.length],
                respliceReason: 'high_loss',
              })
              insertSplice(database.sqlite, splice, { serverSeq, limits: testLimits })
              ids.push(splice.id)
              pairs.set(splice.id, { ...pair, trayId: at.trayId, slot: at.slot })
            } else if (step.kind === 'photo' && ids.length > 0) {
              insertPhotoLink(
                database.sqlite,
                {
                  id: v7(),
                  sha256: 'a'.repeat(64),
                  entity: 'splice',
                  entityId: ids[step.target % ids.length] as string,
                  addedBy: fixture.userId,
                },
                { serverSeq },
              )
            }
          })
          const kept = totalsRow(database, fixture.closureId)
          writeTransaction(database.sqlite, () =>
            recomputeClosureTotals(database.sqlite, fixture.closureId, testLimits),
          )
          const rebuilt = totalsRow(database, fixture.closureId)
          expect(kept).toEqual(rebuilt)
          expect(rebuilt).toMatchObject(modelTotals(fixture.closureId))
        }
      }),
      { numRuns: 120 },
    )
  })

  it('when the worst splice is re-made, then the maximum falls back to the next worst current one', () => {
    const { fixture, plan } = plannedClosure()
    const [t1] = fixture.trayIds as [string]
    const worst = spliceFor(fixture, { trayId: t1, slot: 1 }, plan.get(`${t1}#1`)!, { lossDb: 0.42 })
    writeTransaction(database.sqlite, (serverSeq) => {
      insertSplice(
        database.sqlite,
        spliceFor(fixture, { trayId: t1, slot: 2 }, plan.get(`${t1}#2`)!, { lossDb: 0.07 }),
        { serverSeq, limits: testLimits },
      )
      insertSplice(database.sqlite, worst, { serverSeq, limits: testLimits })
    })
    expect(closureRollup(database.db, fixture.closureId)).toMatchObject({
      lossMax: 0.42,
      overMaximum: 1,
      overTarget: 1,
    })
    const redo = spliceFor(fixture, { trayId: t1, slot: 1 }, plan.get(`${t1}#1`)!, {
      lossDb: 0.03,
      attempt: 2,
      supersedesId: worst.id,
      respliceReason: 'bad_cleave',
    })
    const result = writeTransaction(database.sqlite, (serverSeq) =>
      insertSplice(database.sqlite, redo, { serverSeq, limits: testLimits }),
    )
    expect(result).toEqual({ supersededId: worst.id, supersededWasCurrent: true })
    expect(closureRollup(database.db, fixture.closureId)).toMatchObject({
      lossMax: 0.07,
      overMaximum: 0,
      overTarget: 0,
      resplices: 1,
      logged: 2,
      lossCount: 2,
      lossSum: 0.1,
    })
    const old = database.sqlite
      .prepare('SELECT is_current, server_seq FROM splices WHERE id = ?')
      .get(worst.id)
    expect(old).toEqual({ is_current: 0, server_seq: expect.any(Number) })
  })

  it('counts 0.100 dB as on a 0.10 dB target and 0.101 dB as over it', () => {
    const { fixture, plan } = plannedClosure()
    const [t1] = fixture.trayIds as [string]
    writeTransaction(database.sqlite, (serverSeq) => {
      insertSplice(
        database.sqlite,
        spliceFor(fixture, { trayId: t1, slot: 1 }, plan.get(`${t1}#1`)!, { lossDb: 0.1 }),
        { serverSeq, limits: testLimits },
      )
      insertSplice(
        database.sqlite,
        spliceFor(fixture, { trayId: t1, slot: 2 }, plan.get(`${t1}#2`)!, { lossDb: 0.3 }),
        { serverSeq, limits: testLimits },
      )
      insertSplice(
        database.sqlite,
        spliceFor(fixture, { trayId: t1, slot: 3 }, plan.get(`${t1}#3`)!, { lossDb: 0.101 }),
        { serverSeq, limits: testLimits },
      )
    })
    expect(closureRollup(database.db, fixture.closureId)).toMatchObject({
      overTarget: 2,
      overMaximum: 0,
      completionPct: 30,
    })
  })

  it('when a splice joins another pair than planned, then it is a mismatch and not logged', () => {
    const { fixture, plan } = plannedClosure()
    const [t1, t2] = fixture.trayIds as [string, string]
    writeTransaction(database.sqlite, (serverSeq) => {
      const planned = plan.get(`${t1}#4`)!
      insertSplice(database.sqlite, spliceFor(fixture, { trayId: t1, slot: 4 }, { ...planned, fiberB: 23 }), {
        serverSeq,
        limits: testLimits,
      })
      // Slot 6 of tray 2 has no plan row, and the pair is planned nowhere: off the plan and a mismatch too.
      insertSplice(
        database.sqlite,
        spliceFor(fixture, { trayId: t2, slot: 6 }, { ...planned, fiberA: 24, fiberB: 24 }),
        { serverSeq, limits: testLimits },
      )
    })
    expect(closureRollup(database.db, fixture.closureId)).toMatchObject({
      planned: 10,
      logged: 0,
      offPlan: 2,
      mismatches: 2,
    })
  })

  it('refuses a re-splice of an attempt in another closure, writing nothing', () => {
    const first = plannedClosure()
    const second = plannedClosure()
    const [t1] = first.fixture.trayIds as [string]
    const original = spliceFor(first.fixture, { trayId: t1, slot: 1 }, first.plan.get(`${t1}#1`)!)
    writeTransaction(database.sqlite, (serverSeq) =>
      insertSplice(database.sqlite, original, { serverSeq, limits: testLimits }),
    )
    const [s1] = second.fixture.trayIds as [string]
    const stray = spliceFor(second.fixture, { trayId: s1, slot: 1 }, second.plan.get(`${s1}#1`)!, {
      supersedesId: original.id,
      attempt: 2,
      respliceReason: 'other',
    })
    expect(() =>
      writeTransaction(database.sqlite, (serverSeq) =>
        insertSplice(database.sqlite, stray, { serverSeq, limits: testLimits }),
      ),
    ).toThrow(SpliceWriteError)
    expect(database.sqlite.prepare('SELECT count(*) AS n FROM splices WHERE id = ?').get(stray.id)).toEqual({
      n: 0,
    })
  })

  it('when the project limits change, then recomputeProjectTotals re-judges every closure', () => {
    const { fixture, plan } = plannedClosure()
    const [t1] = fixture.trayIds as [string]
    writeTransaction(database.sqlite, (serverSeq) =>
      insertSplice(
        database.sqlite,
        spliceFor(fixture, { trayId: t1, slot: 1 }, plan.get(`${t1}#1`)!, { lossDb: 0.08 }),
        {
          serverSeq,
          limits: testLimits,
        },
      ),
    )
    expect(closureRollup(database.db, fixture.closureId)?.overTarget).toBe(0)
    const tighter = { ...testLimits, estimate: { standardMaxDb: 0.3, contractTargetDb: 0.05 } }
    writeTransaction(database.sqlite, () => recomputeProjectTotals(database.db, fixture.projectId, tighter))
    expect(closureRollup(database.db, fixture.closureId)?.overTarget).toBe(1)
  })
})

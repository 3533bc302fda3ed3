import fc from 'fast-check'
import { describe, expect, it } from 'vitest'
import { currentAttempts } from '#shared/domain/acceptance'
import { straightPlan } from '#shared/domain/plan'
import {
  addToTotals,
  emptyTotals,
  productionByDay,
  removeFromTotals,
  rollUpClosure,
  summarizeTotals,
  totalsOf,
  type RollupSplice,
} from '#shared/domain/rollup'
import { defaultProjectLimits, type PhotoRules } from '#shared/schemas/project'
import type { Splice } from '#shared/schemas/splice'
import { buildSplice, ids, testId } from './builders'

const limits = defaultProjectLimits
const trays = [
  { id: ids.tray1, number: 1, capacity: 12 },
  { id: ids.tray2, number: 2, capacity: 12 },
]
const plan = straightPlan({ cableA: ids.cableA, cableB: ids.cableB, fromA: 1, fromB: 1, count: 24, trays })

function planned(n: number, overrides: Partial<Splice> = {}): Splice {
  const row = plan[n - 1]!
  return buildSplice({ id: testId(2000 + n), ...row, ...overrides })
}

describe('rollUpClosure', () => {
  // Fiber 1: 0.02 → superseded by attempt 2 at 0.04. Fiber 2: 0.15 (over target). Fiber 3: 0.35
  // (over maximum). Fiber 4: no reading. Fiber 5: in slot 5 but joined to B 6 (mismatch, off plan).
  const first = planned(1, { lossDb: 0.12 })
  const splices = [
    first,
    planned(1, {
      id: testId(3001),
      lossDb: 0.04,
      attempt: 2,
      supersedesId: first.id,
      respliceReason: 'high_loss',
    }),
    planned(2, { lossDb: 0.15 }),
    planned(3, { lossDb: 0.35 }),
    planned(4, { lossDb: null, method: 'mechanical' }),
    planned(5, { fiberB: 6, lossDb: 0.01 }),
  ]

  it('when a closure is part logged, then planned, logged, completion and loss figures add up', () => {
    const result = rollUpClosure(plan, splices, limits, {
      photoCounts: { perSplice: { [testId(2002)]: 1, [testId(2003)]: 2 }, perTray: { [ids.tray1]: 1 } },
    })
    expect(result).toEqual({
      planned: 24,
      logged: 4,
      offPlan: 1,
      completionPct: 16.7,
      current: 5,
      totalLossDb: 0.55,
      meanLossDb: 0.1375,
      maxLossDb: 0.35,
      overTarget: 2,
      overMaximum: 1,
      acceptedWithFlag: 0,
      resplices: 1,
      mismatches: 1,
      photos: 2,
      // default rules: photos of over-target splices (both have one), each tray in use (tray 2 has none), closed closure.
      missingPhotos: { splices: 0, trays: 1, closure: 1, total: 2 },
    })
  })

  it('when every splice needs a photo, then each current splice without one is missing', () => {
    const rules: PhotoRules = { perSplice: 'always', perTray: false, closedClosure: false }
    const result = rollUpClosure(plan, splices, limits, {
      photoRules: rules,
      photoCounts: { perSplice: { [testId(2002)]: 1 } },
    })
    expect(result.missingPhotos).toEqual({ splices: 4, trays: 0, closure: 0, total: 4 })
    const none = rollUpClosure(plan, splices, limits, { photoRules: { ...rules, perSplice: 'none' } })
    expect(none.missingPhotos.total).toBe(0)
  })

  it('when nothing is planned or logged, then the figures are zero and the loss figures empty', () => {
    expect(
      rollUpClosure([], [], limits, {
        photoRules: { perSplice: 'none', perTray: true, closedClosure: false },
      }),
    ).toEqual({
      planned: 0,
      logged: 0,
      offPlan: 0,
      completionPct: 0,
      current: 0,
      totalLossDb: 0,
      meanLossDb: null,
      maxLossDb: null,
      overTarget: 0,
      overMaximum: 0,
      acceptedWithFlag: 0,
      resplices: 0,
      mismatches: 0,
      photos: 0,
      missingPhotos: { splices: 0, trays: 0, closure: 0, total: 0 },
    })
  })

  it('when every planned pair is logged, then completion is 100 %', () => {
    const all = plan.map((row, i) => buildSplice({ id: testId(4000 + i), ...row }))
    expect(rollUpClosure(plan, all, limits).completionPct).toBe(100)
  })

  it('when an over-target splice is accepted after the allowed attempts, then it counts as accepted and over target', () => {
    const accepted = planned(1, { lossDb: 0.18, attempt: 3, acceptReason: 'three attempts, fragile fiber' })
    const result = rollUpClosure(plan, [accepted], limits)
    expect(result).toMatchObject({ overTarget: 1, acceptedWithFlag: 1, overMaximum: 0 })
  })
})

describe('productionByDay', () => {
  it('when splices cross midnight in the crew time zone, then they count on the local day', () => {
    const rows = productionByDay(
      [
        buildSplice({ id: testId(1), splicedAt: '2025-03-14T23:30:00-05:00' }),
        buildSplice({ id: testId(2), splicedAt: '2025-03-15T04:10:00Z', lossDb: 0.2 }),
        buildSplice({
          id: testId(3),
          splicedAt: '2025-03-15T05:10:00Z',
          attempt: 2,
          supersedesId: testId(1),
          respliceReason: 'bubble',
        }),
        buildSplice({ id: testId(4), splicedAt: '2025-03-15T14:00:00Z', splicerId: ids.otherSplicer }),
      ],
      { timeZoneOffsetMinutes: -300, limits },
    )
    expect(rows).toEqual([
      { splicerId: ids.splicer, day: '2025-03-14', splices: 2, resplices: 0, overTarget: 1 },
      { splicerId: ids.splicer, day: '2025-03-15', splices: 1, resplices: 1, overTarget: 0 },
      { splicerId: ids.otherSplicer, day: '2025-03-15', splices: 1, resplices: 0, overTarget: 0 },
    ])
  })

  it('when a splice time cannot be read, then it is refused', () => {
    expect(() =>
      productionByDay([buildSplice({ splicedAt: 'yesterday' })], { timeZoneOffsetMinutes: 0, limits }),
    ).toThrow(RangeError)
  })
})

// Random closures: a few fibers, each with a chain of attempts; losses in thousandths like the schema allows.
const closureSplices = fc
  .array(
    fc.record({
      fiber: fc.integer({ min: 1, max: 24 }),
      losses: fc.array(fc.option(fc.integer({ min: -50, max: 600 }), { nil: null }), {
        minLength: 1,
        maxLength: 4,
      }),
      acceptLast: fc.boolean(),
    }),
    { maxLength: 24 },
  )
  .map((fibers) => {
    const splices: Splice[] = []
    let next = 10_000
    for (const { fiber, losses, acceptLast } of fibers) {
      let previous: string | null = null
      losses.forEach((milli, i) => {
        const id = testId(next++)
        const row = plan[fiber - 1]!
        splices.push(
          buildSplice({
            id,
            ...row,
            lossDb: milli === null ? null : milli / 1000,
            attempt: i + 1,
            supersedesId: previous,
            respliceReason: previous ? 'high_loss' : null,
            acceptReason: acceptLast && i === losses.length - 1 ? 'accepted by the engineer' : null,
            splicedAt: `2025-03-${String(10 + (next % 5)).padStart(2, '0')}T${String(next % 24).padStart(2, '0')}:00:00Z`,
          }),
        )
        previous = id
      })
    }
    return splices
  })

describe('roll-up properties', () => {
  it('when the splices are shuffled, then the roll-up and the production counts are the same', () => {
    fc.assert(
      fc.property(
        closureSplices.chain((splices) =>
          fc.tuple(fc.constant(splices), fc.shuffledSubarray(splices, { minLength: splices.length })),
        ),
        ([splices, shuffled]) => {
          expect(rollUpClosure(plan, shuffled, limits)).toEqual(rollUpClosure(plan, splices, limits))
          const options = { timeZoneOffsetMinutes: 60, limits }
          expect(productionByDay(shuffled, options)).toEqual(productionByDay(splices, options))
        },
      ),
      { numRuns: 200 },
    )
  })

  it('when splices arrive one by one in any order, then the running totals equal the batch totals', () => {
    fc.assert(
      fc.property(
        closureSplices.chain((splices) => fc.shuffledSubarray(splices, { minLength: splices.length })),
        (arrivals) => {
          // What the server does on each arrival: retire the attempt it supersedes, and count a late
          // arrival that something already supersedes as an attempt only.
          let totals = emptyTotals()
          const arrived: RollupSplice[] = []
          for (const splice of arrivals) {
            const replaced = arrived.find((s) => s.id === splice.supersedesId)
            if (replaced && currentAttempts(arrived).includes(replaced))
              totals = removeFromTotals(totals, replaced, limits)
            const supersededAlready = arrived.some((s) => s.supersedesId === splice.id)
            totals = addToTotals(totals, splice, limits, { current: !supersededAlready })
            arrived.push(splice)
          }
          expect(totals).toEqual(totalsOf(arrivals, limits))
          const rollup = rollUpClosure(plan, arrivals, limits)
          const summary = summarizeTotals(totals)
          expect(summary).toEqual({
            current: rollup.current,
            totalLossDb: rollup.totalLossDb,
            meanLossDb: rollup.meanLossDb,
            resplices: rollup.resplices,
            overTarget: rollup.overTarget,
            overMaximum: rollup.overMaximum,
            acceptedWithFlag: rollup.acceptedWithFlag,
          })
        },
      ),
      { numRuns: 200 },
    )
  })
})

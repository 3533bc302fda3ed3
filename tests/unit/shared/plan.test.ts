import fc from 'fast-check'
import { describe, expect, it } from 'vitest'
import {
  pairKey,
  PlanGenerationError,
  planRowForSlot,
  rangePlan,
  samePair,
  straightPlan,
  validatePlan,
  type PlanCable,
  type FiberPair,
  type PlanTray,
  type SlottedPair,
} from '#shared/domain/plan'
import { ids, testId } from './builders'

const cables: PlanCable[] = [
  { id: ids.cableA, fiberCount: 144, label: 'F-144' },
  { id: ids.cableB, fiberCount: 48, label: 'D-48' },
]
const trays: PlanTray[] = [
  { id: ids.tray1, number: 1, capacity: 12 },
  { id: ids.tray2, number: 2, capacity: 12 },
]
const row = (overrides: Partial<SlottedPair> = {}): SlottedPair => ({
  trayId: ids.tray1,
  slot: 1,
  cableAId: ids.cableA,
  fiberA: 1,
  cableBId: ids.cableB,
  fiberB: 1,
  ...overrides,
})

describe('validatePlan', () => {
  it('when every row is sound, then there are no problems', () => {
    expect(validatePlan([row(), row({ slot: 2, fiberA: 2, fiberB: 2 })], { cables, trays })).toEqual([])
  })

  it('when a fiber number is outside its cable, then the row is reported with its index and row number', () => {
    const problems = validatePlan([row(), row({ slot: 2, fiberA: 2, fiberB: 49 })], { cables, trays })
    expect(problems).toEqual([
      {
        index: 1,
        row: 2,
        code: 'fiber_out_of_range',
        field: 'fiberB',
        message: 'Fiber 49 is outside cable D-48 (fibers 1–48).',
      },
    ])
    expect(validatePlan([row({ fiberA: 0 })], { cables, trays })[0]).toMatchObject({
      code: 'fiber_out_of_range',
    })
    expect(validatePlan([row({ fiberA: 1.5 })], { cables, trays })[0]).toMatchObject({
      code: 'fiber_out_of_range',
    })
  })

  it('when a fiber appears twice on the same side, then the later row is reported', () => {
    const problems = validatePlan([row(), row({ slot: 2, fiberB: 2 })], { cables, trays })
    expect(problems).toEqual([
      expect.objectContaining({
        index: 1,
        code: 'fiber_used_twice',
        field: 'fiberA',
        message: 'Fiber 1 of F-144 is already used in row 1.',
      }),
    ])
  })

  it('when a fiber of a cable appears once on each side, then it is used twice too', () => {
    const loop = [
      row({ cableAId: ids.cableA, fiberA: 5, cableBId: ids.cableB, fiberB: 5 }),
      row({ slot: 2, cableAId: ids.cableB, fiberA: 9, cableBId: ids.cableA, fiberB: 5 }),
    ]
    expect(validatePlan(loop, { cables, trays })).toEqual([
      expect.objectContaining({ index: 1, code: 'fiber_used_twice', field: 'fiberB' }),
    ])
  })

  it('when a fiber is joined to itself, then the row says so once', () => {
    const problems = validatePlan([row({ cableBId: ids.cableA, fiberB: 1 })], { cables, trays })
    expect(problems.map((p) => p.code)).toEqual(['same_fiber_both_sides'])
  })

  it('when a cable or tray is unknown, then the row says which', () => {
    const problems = validatePlan([row({ cableBId: testId(999), trayId: testId(998) })], { cables, trays })
    expect(problems.map((p) => [p.code, p.field])).toEqual([
      ['unknown_cable', 'cableBId'],
      ['unknown_tray', 'trayId'],
    ])
  })

  it('when a slot is beyond the tray capacity or planned twice, then both are reported', () => {
    const problems = validatePlan(
      [row({ slot: 13 }), row({ slot: 3, fiberA: 2, fiberB: 2 }), row({ slot: 3, fiberA: 3, fiberB: 3 })],
      { cables, trays },
    )
    expect(problems.map((p) => [p.row, p.code])).toEqual([
      [1, 'slot_out_of_capacity'],
      [3, 'duplicate_slot'],
    ])
  })

  it('when a row has several faults, then every one is reported', () => {
    const problems = validatePlan([row(), row({ fiberA: 1, fiberB: 99, slot: 1 })], { cables, trays })
    expect(problems.map((p) => p.code)).toEqual(['fiber_out_of_range', 'fiber_used_twice', 'duplicate_slot'])
  })
})

describe('plan generators', () => {
  it('when 20 fibers are planned straight from tray 1, then tray 1 fills and tray 2 takes the rest', () => {
    const rows = straightPlan({
      cableA: ids.cableA,
      cableB: ids.cableB,
      fromA: 13,
      fromB: 1,
      count: 20,
      trays,
    })
    expect(rows).toHaveLength(20)
    expect(rows[0]).toEqual({
      trayId: ids.tray1,
      slot: 1,
      cableAId: ids.cableA,
      fiberA: 13,
      cableBId: ids.cableB,
      fiberB: 1,
    })
    expect(rows[11]).toMatchObject({ trayId: ids.tray1, slot: 12, fiberA: 24, fiberB: 12 })
    expect(rows[12]).toMatchObject({ trayId: ids.tray2, slot: 1, fiberA: 25, fiberB: 13 })
    expect(validatePlan(rows, { cables, trays })).toEqual([])
  })

  it('when ranges follow each other, then they continue in the next free slot', () => {
    const rows = rangePlan(
      [
        { cableA: ids.cableA, cableB: ids.cableB, fromA: 1, fromB: 1, count: 6 },
        { cableA: ids.cableA, cableB: ids.cableB, fromA: 49, fromB: 25, count: 6 },
      ],
      { trays, startTray: 1, startSlot: 4 },
    )
    expect(rows[0]).toMatchObject({ trayId: ids.tray1, slot: 4, fiberA: 1, fiberB: 1 })
    expect(rows[6]).toMatchObject({ trayId: ids.tray1, slot: 10, fiberA: 49, fiberB: 25 })
    expect(rows[9]).toMatchObject({ trayId: ids.tray2, slot: 1, fiberA: 52, fiberB: 28 })
    expect(validatePlan(rows, { cables, trays })).toEqual([])
  })

  it('when the trays cannot hold the ranges, then a typed error says how many slots are left', () => {
    const run = () =>
      straightPlan({ cableA: ids.cableA, cableB: ids.cableB, fromA: 1, fromB: 1, count: 25, trays })
    expect(run).toThrow(PlanGenerationError)
    expect(run).toThrow('The plan needs 25 slots from tray 1 slot 1, but only 24 are left.')
  })

  it('when the start tray or slot does not exist, or a range is not whole, then a typed error is raised', () => {
    const base = { cableA: ids.cableA, cableB: ids.cableB, fromA: 1, fromB: 1, count: 1, trays }
    const codeOf = (run: () => unknown) => {
      try {
        run()
      } catch (error) {
        return (error as PlanGenerationError).code
      }
      return null
    }
    expect(codeOf(() => straightPlan({ ...base, startTray: 3 }))).toBe('unknown_tray')
    expect(codeOf(() => straightPlan({ ...base, startSlot: 13 }))).toBe('bad_start_slot')
    expect(codeOf(() => straightPlan({ ...base, count: 0 }))).toBe('bad_range')
    expect(codeOf(() => straightPlan({ ...base, trays: [] }))).toBe('unknown_tray')
  })

  it('when plan rows are looked up by slot, then the row for that tray slot comes back', () => {
    const rows = straightPlan({
      cableA: ids.cableA,
      cableB: ids.cableB,
      fromA: 1,
      fromB: 1,
      count: 14,
      trays,
    })
    expect(planRowForSlot(rows, ids.tray2, 2)).toMatchObject({ fiberA: 14 })
    expect(planRowForSlot(rows, ids.tray2, 3)).toBeNull()
  })

  it('when pairs are keyed, then the orientation does not matter', () => {
    expect(pairKey(row())).toBe(pairKey(row({ cableAId: ids.cableB, cableBId: ids.cableA })))
  })

  it('when random non-overlapping ranges are generated into enough trays, then the plan validates clean', () => {
    const scenario = fc
      .record({
        fiberCount: fc.integer({ min: 1, max: 432 }),
        cuts: fc.uniqueArray(fc.integer({ min: 1, max: 431 }), { maxLength: 6 }),
        capacities: fc.array(fc.integer({ min: 1, max: 24 }), { minLength: 1, maxLength: 8 }),
        offsetB: fc.integer({ min: 0, max: 50 }),
      })
      .map(({ fiberCount, cuts, capacities, offsetB }) => {
        // Split fibers 1..fiberCount of cable A into consecutive ranges, each joined to the same fibers (shifted) of cable B.
        const bounds = [...new Set([0, ...cuts.filter((c) => c < fiberCount), fiberCount])].sort(
          (a, b) => a - b,
        )
        const ranges = bounds.slice(1).map((end, i) => {
          const start = (bounds[i] as number) + 1
          return {
            cableA: ids.cableA,
            cableB: ids.cableB,
            fromA: start,
            fromB: start + offsetB,
            count: end - start + 1,
          }
        })
        const total = capacities.reduce((a, b) => a + b, 0)
        const extra = Math.ceil(Math.max(0, fiberCount - total) / 24)
        const allTrays = [...capacities, ...Array.from({ length: extra }, () => 24)].map((capacity, i) => ({
          id: testId(5000 + i),
          number: i + 1,
          capacity,
        }))
        return { fiberCount, ranges, trays: allTrays, offsetB }
      })
    fc.assert(
      fc.property(scenario, ({ fiberCount, ranges, trays: allTrays, offsetB }) => {
        const rows = rangePlan(ranges, { trays: allTrays })
        expect(rows).toHaveLength(fiberCount)
        const refs = {
          cables: [
            { id: ids.cableA, fiberCount },
            { id: ids.cableB, fiberCount: fiberCount + offsetB },
          ],
          trays: allTrays,
        }
        expect(validatePlan(rows, refs)).toEqual([])
      }),
      { numRuns: 200 },
    )
  })
})

describe('samePair', () => {
  // Two cables and three fibers, so that generated pairs often share one or both ends.
  const end = fc.record({
    cable: fc.constantFrom('cable-1', 'cable-2'),
    fiber: fc.integer({ min: 1, max: 3 }),
  })
  const pair = fc
    .tuple(end, end)
    .map(([a, b]): FiberPair => ({ cableAId: a.cable, fiberA: a.fiber, cableBId: b.cable, fiberB: b.fiber }))
  const flipped = (p: FiberPair): FiberPair => ({
    cableAId: p.cableBId,
    fiberA: p.fiberB,
    cableBId: p.cableAId,
    fiberB: p.fiberA,
  })

  it('agrees with pairKey, whichever side either pair names as A', () => {
    fc.assert(
      fc.property(pair, pair, (x, y) => {
        expect(samePair(x, y)).toBe(pairKey(x) === pairKey(y))
        expect(samePair(x, flipped(y))).toBe(samePair(x, y))
        expect(samePair(x, flipped(x))).toBe(true)
      }),
      { numRuns: 500 },
    )
  })

  it('tells a shared end from the same two ends', () => {
    const x = { cableAId: 'cable-1', fiberA: 1, cableBId: 'cable-2', fiberB: 1 }
    expect(samePair(x, { ...x, fiberB: 2 })).toBe(false)
    expect(samePair(x, { cableAId: 'cable-2', fiberA: 1, cableBId: 'cable-1', fiberB: 1 })).toBe(true)
  })
})

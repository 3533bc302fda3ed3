import fc from 'fast-check'
import { describe, expect, it } from 'vitest'
import { cableStarts, pathGraph, traceFiberPath, type PathJoin } from '#shared/domain/fiberPath'
import { otdrReadingDb } from '#shared/domain/loss'
import { distanceFromAM, flagsForMeasurement, matchEvents, spliceMeasurement } from '#shared/domain/otdr'

describe('OTDR bidirectional pairing', () => {
  // REFERENCE.md §3, ITU-T G.650.3 Appendix I: L = (L_AB + L_BA) / 2.
  it.each([
    [0.2, 0.1, 0.15, 'published worked example'],
    [-0.05, 0.25, 0.1, 'computed'],
    [-0.243, 0.343, 0.05, 'computed, G.652.D 9.2 µm to 8.6 µm, true loss 0.05 dB'],
  ])('when A→B reads %s and B→A %s, then the average is %s (%s)', (ab, ba, want) => {
    const result = spliceMeasurement(ab, ba)
    expect(result.kind).toBe('average')
    expect(result.kind === 'average' && result.lossDb).toBeCloseTo(want, 9)
  })

  it('when both directions read a gain, then it is flagged both-negative, never averaged (common practice)', () => {
    const result = spliceMeasurement(-0.03, -0.02)
    expect(result.kind).toBe('both_negative')
    expect(flagsForMeasurement(result, undefined, null, 0.15)).toEqual(['both_negative'])
  })

  it('when one direction only was read, then it stays one-way (common practice)', () => {
    expect(flagsForMeasurement(spliceMeasurement(0.05, null), undefined, 0.04, 0.15)).toEqual(['one_way'])
  })

  it('when the average passes the target or the maximum or the estimate differs, then the flags say so', () => {
    const limit = { contractTargetDb: 0.1, standardMaxDb: 0.3 } // REFERENCE.md §2, common practice target
    expect(flagsForMeasurement(spliceMeasurement(0.2, 0.1), limit, 0.14, 0.15)).toEqual([
      'measured_over_target',
    ])
    expect(flagsForMeasurement(spliceMeasurement(0.4, 0.3), limit, 0.02, 0.15)).toEqual([
      'measured_over_maximum',
      'estimate_disagrees',
    ])
    expect(flagsForMeasurement(spliceMeasurement(0.05, 0.05), limit, 0.04, 0.15)).toEqual([])
  })

  it('when an event is read from the B end, then it lies at length − d from A (REFERENCE.md §3)', () => {
    expect(distanceFromAM('b_to_a', 3151, 1911)).toBe(1240)
    expect(distanceFromAM('a_to_b', 3151, 1240)).toBe(1240)
  })
})

describe('event matching', () => {
  const joins = [
    { joinId: 's1', closureId: 'c1', atM: 1000 },
    { joinId: 's2', closureId: 'c2', atM: 1500 },
  ]
  it('when events sit within tolerance of joins, then each goes to the nearest; others are unmatched or path ends', () => {
    const m = matchEvents(
      [
        { atM: 1008, kind: 'splice' },
        { atM: 1300, kind: 'bend' },
        { atM: 1495, kind: 'splice' },
        { atM: 1490, kind: 'splice' },
        { atM: 2000, kind: 'end' },
        { atM: 0, kind: 'connector' },
      ],
      joins,
      2000,
      15,
    )
    expect(m.map((x) => x.kind)).toEqual(['join', 'unmatched', 'join', 'duplicate', 'path_end', 'path_end'])
    expect(m[0]).toMatchObject({ joinId: 's1', offsetM: 8 })
    expect(m[2]).toMatchObject({ joinId: 's2' })
  })
})

/** A straight route: cable i runs from closure i−1 (or the origin) to closure i; fiber f spliced straight through. */
function route(positions: number[], slack: number[]) {
  const closures = positions.map((p, i) => ({ id: `c${i}`, label: `C-${i}`, routePositionM: p }))
  const cables = [...positions, positions.at(-1)! + 500].map((end, i) => {
    const start = i === 0 ? 0 : positions[i - 1]!
    return { id: `k${i}`, label: `K-${i}`, lengthM: end - start + slack[i]! }
  })
  const joins: PathJoin[] = positions.map((_, i) => ({
    id: `s${i}`,
    closureId: `c${i}`,
    a: { cableId: `k${i}`, fiber: 1 },
    b: { cableId: `k${i + 1}`, fiber: 1 },
  }))
  return { closures, cables, joins, graph: pathGraph(cableStarts(cables, closures, joins), closures, joins) }
}

const sortedPositions = fc
  .uniqueArray(fc.integer({ min: 1, max: 400 }), { minLength: 1, maxLength: 8 })
  .map((xs) => xs.sort((a, b) => a - b).map((x) => x * 50))

describe('a generated route with known answers', () => {
  it('when both directions are synthesised with mode-field gainers, then the averages give back the true losses', () => {
    fc.assert(
      fc.property(
        sortedPositions.chain((positions) =>
          fc.record({
            positions: fc.constant(positions),
            trueLoss: fc.array(
              fc.integer({ min: 0, max: 300 }).map((x) => x / 1000),
              {
                minLength: positions.length,
                maxLength: positions.length,
              },
            ),
            mfd: fc.array(
              fc.integer({ min: 86, max: 96 }).map((x) => x / 10),
              {
                minLength: positions.length + 1,
                maxLength: positions.length + 1,
              },
            ),
            noise: fc.array(fc.integer({ min: -10, max: 10 }), {
              minLength: positions.length,
              maxLength: positions.length,
            }),
          }),
        ),
        ({ positions, trueLoss, mfd, noise }) => {
          const { graph } = route(positions, positions.map(() => 0).concat(0))
          const path = traceFiberPath(graph, { cableId: 'k0', fiber: 1 })
          expect(path.joins.map((j) => j.atM)).toEqual(positions)
          const length = path.lengthM
          const round = (x: number) => Math.round(x * 1000) / 1000
          const ab = positions.map((p, i) => ({
            atM: p + noise[i]!,
            kind: 'splice' as const,
            loss: round(otdrReadingDb(trueLoss[i]!, mfd[i]!, mfd[i + 1]!)),
          }))
          // Seen from B, the light crosses each splice the other way and the distances count from B.
          const ba = positions.map((p, i) => ({
            d: length - p - noise[i]!,
            kind: 'splice' as const,
            loss: round(otdrReadingDb(trueLoss[i]!, mfd[i + 1]!, mfd[i]!)),
          }))
          const mAb = matchEvents(ab, path.joins, length, 15)
          const mBa = matchEvents(
            ba.map((e) => ({ atM: distanceFromAM('b_to_a', length, e.d), kind: e.kind })),
            path.joins,
            length,
            15,
          )
          positions.forEach((_, i) => {
            expect(mAb[i]).toMatchObject({ kind: 'join', joinId: `s${i}` })
            expect(mBa[i]).toMatchObject({ kind: 'join', joinId: `s${i}` })
            const result = spliceMeasurement(ab[i]!.loss, ba[i]!.loss)
            // Both readings are rounded to 0.001 dB, so the average is within 0.001 dB of the truth.
            if (result.kind === 'average')
              expect(Math.abs(result.lossDb - trueLoss[i]!)).toBeLessThanOrEqual(0.001)
            else expect(result.kind).toBe('both_negative')
          })
        },
      ),
      { numRuns: 200 },
    )
  })

  it('when an event lies between closures, then it is unmatched at the right distance', () => {
    fc.assert(
      fc.property(sortedPositions, fc.integer({ min: 0, max: 1000 }), (positions, pick) => {
        const { graph } = route(positions, positions.map(() => 0).concat(0))
        const path = traceFiberPath(graph, { cableId: 'k0', fiber: 1 })
        const gaps = [0, ...positions]
          .map((p, i) => [p, positions[i] ?? path.lengthM] as const)
          .filter(([a, b]) => b - a > 40)
        fc.pre(gaps.length > 0)
        const [a, b] = gaps[pick % gaps.length]!
        const at = (a + b) / 2
        expect(matchEvents([{ atM: at, kind: 'bend' }], path.joins, path.lengthM, 15)[0]).toEqual({
          kind: 'unmatched',
        })
      }),
    )
  })
})

describe('fiber path tracing', () => {
  it('when traced from any fiber of a straight route, then the path is the same, end to end', () => {
    fc.assert(
      fc.property(sortedPositions, fc.nat(), (positions, pick) => {
        const { graph } = route(positions, positions.map(() => 0).concat(0))
        const start = { cableId: `k${pick % (positions.length + 1)}`, fiber: 1 }
        const path = traceFiberPath(graph, start)
        expect(path.segments.map((s) => s.cableId)).toEqual([...positions, 0].map((_, i) => `k${i}`))
        expect(path.aEnd).toEqual({ kind: 'terminal' })
        expect(path.bEnd).toEqual({ kind: 'terminal' })
        expect(path.lengthM).toBe(positions.at(-1)! + 500)
      }),
    )
  })

  it('when joins close a loop, then tracing stops and reports it', () => {
    fc.assert(
      fc.property(
        sortedPositions.filter((p) => p.length >= 2),
        (positions) => {
          const r = route(positions, positions.map(() => 0).concat(0))
          const back: PathJoin = {
            id: 'loop',
            closureId: 'c0',
            a: { cableId: `k${positions.length}`, fiber: 1 },
            b: { cableId: 'k0', fiber: 1 },
          }
          const graph = pathGraph(cableStarts(r.cables, r.closures, r.joins), r.closures, [...r.joins, back])
          const path = traceFiberPath(graph, { cableId: 'k1', fiber: 1 })
          expect([path.aEnd.kind, path.bEnd.kind]).toContain('loop')
          expect(path.segments.length).toBe(positions.length + 1)
        },
      ),
    )
  })

  it('when a fiber is joined onward twice, then the path reports a branch with both joins', () => {
    const r = route([1000, 2000], [0, 0, 0])
    const fork: PathJoin = {
      id: 'fork',
      closureId: 'c1',
      a: { cableId: 'k1', fiber: 1 },
      b: { cableId: 'k2', fiber: 2 },
    }
    const graph = pathGraph(cableStarts(r.cables, r.closures, r.joins), r.closures, [...r.joins, fork])
    const path = traceFiberPath(graph, { cableId: 'k0', fiber: 1 })
    expect(path.bEnd).toEqual({ kind: 'branch', joinIds: ['s1', 'fork'] })
    expect(path.segments.map((s) => s.cableId)).toEqual(['k0', 'k1'])
  })

  it('when a fiber stops in a closure where its cable is spliced, then the path ends in a dead end there', () => {
    const r = route([1000, 2000], [0, 0, 0])
    const path = traceFiberPath(r.graph, { cableId: 'k1', fiber: 7 })
    expect(path.aEnd).toEqual({ kind: 'dead_end', closureId: 'c0' })
    expect(path.bEnd).toEqual({ kind: 'dead_end', closureId: 'c1' })
    expect(path.lengthM).toBe(1000)
  })
})

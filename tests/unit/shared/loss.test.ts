import fc from 'fast-check'
import { describe, expect, it } from 'vitest'
import {
  bEndToADistanceM,
  bidirectionalAverage,
  dbAbove,
  dbToPowerFraction,
  lateralOffsetLossDb,
  mfdMismatchLossDb,
  otdrDistanceM,
  otdrReadingDb,
  otdrRoundTripSeconds,
  powerFractionToDb,
  spliceCouplingLossDb,
} from '#shared/domain/loss'

// Three-decimal check values are compared to within half a thousandth (REFERENCE: tolerance 5e-4).
const closeTo3 = (actual: number, expected: number) => expect(Math.abs(actual - expected)).toBeLessThan(5e-4)
// Four-decimal check values, to within half of their last digit.
const closeTo4 = (actual: number, expected: number) => expect(Math.abs(actual - expected)).toBeLessThan(5e-5)

describe('bidirectional average (ITU-T G.650.3 Appendix I)', () => {
  it('when A→B reads 0.20 and B→A 0.10, then the loss is 0.15 (published worked example)', () => {
    const result = bidirectionalAverage(0.2, 0.1)
    expect(result.kind).toBe('average')
    if (result.kind !== 'average') return
    closeTo3(result.lossDb, 0.15)
    expect(result.gainer).toBeNull()
  })

  it('when A→B reads −0.05 and B→A +0.25, then the loss is 0.10 and A→B is the gainer (computed)', () => {
    const result = bidirectionalAverage(-0.05, 0.25)
    expect(result).toMatchObject({ kind: 'average', gainer: 'a_to_b' })
    if (result.kind === 'average') closeTo3(result.lossDb, 0.1)
  })

  it('when A→B reads −0.243 and B→A +0.343, then the loss is 0.050 (computed, G.652.D 9.2 µm to 8.6 µm)', () => {
    const result = bidirectionalAverage(-0.243, 0.343)
    expect(result).toMatchObject({ kind: 'average', gainer: 'a_to_b' })
    if (result.kind === 'average') closeTo3(result.lossDb, 0.05)
  })

  it('when a 0.05 dB splice joins 9.2 µm to 8.6 µm fiber, then the OTDR reads −0.243 / +0.343 (computed)', () => {
    const ab = otdrReadingDb(0.05, 9.2, 8.6)
    const ba = otdrReadingDb(0.05, 8.6, 9.2)
    closeTo3(ab, -0.243)
    closeTo3(ba, 0.343)
    const result = bidirectionalAverage(ab, ba)
    expect(result).toMatchObject({ kind: 'average', gainer: 'a_to_b' })
    if (result.kind === 'average') closeTo3(result.lossDb, 0.05)
  })

  it('when only one direction was measured, then it stays one-way, never an average (common practice)', () => {
    expect(bidirectionalAverage(0.12, null)).toEqual({
      kind: 'one_way',
      lossDb: 0.12,
      direction: 'a_to_b',
      gainer: false,
    })
    expect(bidirectionalAverage(null, -0.08)).toEqual({
      kind: 'one_way',
      lossDb: -0.08,
      direction: 'b_to_a',
      gainer: true,
    })
    expect(bidirectionalAverage(null, null)).toEqual({ kind: 'no_reading' })
  })

  it('when both directions read a gain, then it is a measurement or matching error, not a loss (common practice)', () => {
    expect(bidirectionalAverage(-0.05, -0.02)).toEqual({ kind: 'both_negative', abDb: -0.05, baDb: -0.02 })
  })

  it('when a reading is 0.000, then it is not a gain', () => {
    expect(bidirectionalAverage(0, 0.04)).toMatchObject({ kind: 'average', gainer: null })
  })

  it('when a reading is not a number, then it is refused', () => {
    expect(() => bidirectionalAverage(Number.NaN, 0.1)).toThrow(RangeError)
  })

  it('when the two directions are swapped, then the loss is the same and the gainer direction swaps', () => {
    const reading = fc.double({ min: -1, max: 10, noNaN: true })
    fc.assert(
      fc.property(reading, reading, (ab, ba) => {
        const there = bidirectionalAverage(ab, ba)
        const back = bidirectionalAverage(ba, ab)
        expect(back.kind).toBe(there.kind)
        if (there.kind === 'average' && back.kind === 'average') {
          expect(back.lossDb).toBe(there.lossDb)
          const swapped = { a_to_b: 'b_to_a', b_to_a: 'a_to_b' } as const
          expect(back.gainer).toBe(there.gainer === null ? null : swapped[there.gainer])
          expect(there.lossDb).toBeGreaterThanOrEqual(Math.min(ab, ba))
          expect(there.lossDb).toBeLessThanOrEqual(Math.max(ab, ba))
        }
      }),
    )
  })
})

describe('mode field mismatch and offset (Marcuse, Loss Analysis of Single-Mode Fiber Splices, 1977)', () => {
  it('when 8.8 µm meets 9.3 µm, then the loss is 0.013 dB (published application note on dissimilar fibers)', () => {
    closeTo3(mfdMismatchLossDb(8.8, 9.3), 0.013)
  })

  it('when 9.2 µm meets 10.4 µm, then the loss is 0.0651 dB (computed)', () => {
    closeTo4(mfdMismatchLossDb(9.2, 10.4), 0.0651)
  })

  it('when 9.2 µm fibers are offset by 1.0 µm, then the loss is 0.2052 dB (computed)', () => {
    closeTo4(lateralOffsetLossDb(1.0, 9.2), 0.2052)
    // The simplified form L = 4.343·(d/w)² with w = MFD/2.
    closeTo4(4.343 * (1.0 / 4.6) ** 2, 0.2052)
  })

  it('when mismatch and offset combine, then the general form gives their sum in dB', () => {
    const both = spliceCouplingLossDb({ mfd1Um: 9.2, mfd2Um: 9.2, offsetUm: 1 })
    closeTo4(both, 0.2052)
    const mixed = spliceCouplingLossDb({ mfd1Um: 9.2, mfd2Um: 10.4, offsetUm: 0 })
    closeTo4(mixed, 0.0651)
  })

  it('when a diameter is not above zero, then it is refused', () => {
    expect(() => mfdMismatchLossDb(0, 9.2)).toThrow(RangeError)
    expect(() => lateralOffsetLossDb(1, -9.2)).toThrow(RangeError)
  })

  const mfd = fc.double({ min: 2, max: 60, noNaN: true })
  it('when any two diameters meet, then the loss is the same both ways, never below zero, and zero when equal', () => {
    fc.assert(
      fc.property(mfd, mfd, (w1, w2) => {
        const loss = mfdMismatchLossDb(w1, w2)
        expect(loss).toBe(mfdMismatchLossDb(w2, w1))
        expect(loss).toBeGreaterThanOrEqual(0)
        expect(mfdMismatchLossDb(w1, w1)).toBe(0)
      }),
    )
  })

  it('when the offset grows, then the loss never falls', () => {
    fc.assert(
      fc.property(
        mfd,
        fc.double({ min: 0, max: 5, noNaN: true }),
        fc.double({ min: 0, max: 5, noNaN: true }),
        (w, d1, d2) => {
          const [small, large] = d1 <= d2 ? [d1, d2] : [d2, d1]
          expect(lateralOffsetLossDb(large, w)).toBeGreaterThanOrEqual(lateralOffsetLossDb(small, w))
        },
      ),
    )
  })
})

describe('power and distance conversions', () => {
  it('when 3.0103 dB is converted, then half the power gets through', () => {
    closeTo4(dbToPowerFraction(10 * Math.log10(2)), 0.5)
    expect(powerFractionToDb(1)).toBeCloseTo(0, 12)
    expect(() => powerFractionToDb(0)).toThrow(RangeError)
  })

  it('when dB goes to a fraction and back, then the value returns', () => {
    fc.assert(
      fc.property(fc.double({ min: -30, max: 60, noNaN: true }), (db) => {
        expect(Math.abs(powerFractionToDb(dbToPowerFraction(db)) - db)).toBeLessThan(1e-9)
      }),
    )
  })

  it('when light travels 1 km and back at group index 1.467, then it takes 9.79 µs (fiber data sheets)', () => {
    expect(otdrRoundTripSeconds(1000) * 1e6).toBeCloseTo(9.79, 2)
    expect(otdrDistanceM(9.79e-6)).toBeCloseTo(1000, -1)
  })

  it('when a distance goes to a round-trip time and back, then it returns', () => {
    fc.assert(
      fc.property(
        fc.double({ min: 0, max: 200_000, noNaN: true }),
        fc.double({ min: 1.4, max: 1.5, noNaN: true }),
        (d, n) => {
          expect(Math.abs(otdrDistanceM(otdrRoundTripSeconds(d, n), n) - d)).toBeLessThan(1e-6)
        },
      ),
    )
  })

  it('when an event is 800 m from end B of a 2450 m fiber, then it is 1650 m from end A', () => {
    expect(bEndToADistanceM(2450, 800)).toBe(1650)
  })

  it('when dB values differ by less than half a thousandth, then neither is above the other', () => {
    expect(dbAbove(0.1, 0.1)).toBe(false)
    expect(dbAbove(0.1 + 0.2 - 0.2, 0.1)).toBe(false)
    expect(dbAbove(0.101, 0.1)).toBe(true)
  })
})

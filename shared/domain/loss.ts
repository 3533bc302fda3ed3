/** dB values are compared with this tolerance, half of the thousandth that readings are given in. */
export const dbEpsilon = 5e-4

/** Speed of light in vacuum, m/s (exact by the SI definition of the metre). */
export const speedOfLightMPerS = 299_792_458

/** Group index of G.652 single-mode fiber at 1310/1550 nm, as fiber data sheets give it. */
export const defaultGroupIndex = 1.467

/** Tells whether dB value `a` is above `b` by more than the comparison tolerance. */
export function dbAbove(a: number, b: number): boolean {
  return a > b + dbEpsilon
}

/** Converts dB to whole thousandths of a dB, the unit sums are kept in so they stay exact in any order. */
export function toMilliDb(db: number): number {
  return Math.round(db * 1000)
}

function assertFinite(...values: number[]): void {
  for (const value of values) {
    if (!Number.isFinite(value)) throw new RangeError(`Expected a finite number, got ${value}.`)
  }
}

function assertPositive(what: string, ...values: number[]): void {
  for (const value of values) {
    if (!Number.isFinite(value) || value <= 0) throw new RangeError(`${what} must be above 0, got ${value}.`)
  }
}

export type Direction = 'a_to_b' | 'b_to_a'

/** The loss of one splice from OTDR readings taken from one or both ends, per wavelength. */
export type BidirectionalResult =
  | { kind: 'average'; lossDb: number; abDb: number; baDb: number; gainer: Direction | null }
  | { kind: 'one_way'; lossDb: number; direction: Direction; gainer: boolean }
  | { kind: 'both_negative'; abDb: number; baDb: number }
  | { kind: 'no_reading' }

/** Combines the A→B and B→A readings of one event (dB, signed; null when not taken) into its loss. */
export function bidirectionalAverage(ab: number | null, ba: number | null): BidirectionalResult {
  // ITU-T G.650.3 Appendix I: the splice loss is the mean of the signed readings from both ends.
  // Common practice: a gain in one direction is judged on the average; gains in both directions are
  // an event-matching or measurement error; a single direction stays one-way, never an average.
  if (ab === null && ba === null) return { kind: 'no_reading' }
  if (ab === null || ba === null) {
    const lossDb = (ab ?? ba) as number
    assertFinite(lossDb)
    return {
      kind: 'one_way',
      lossDb,
      direction: ab === null ? 'b_to_a' : 'a_to_b',
      gainer: lossDb < -dbEpsilon,
    }
  }
  assertFinite(ab, ba)
  const abGain = ab < -dbEpsilon
  const baGain = ba < -dbEpsilon
  if (abGain && baGain) return { kind: 'both_negative', abDb: ab, baDb: ba }
  return {
    kind: 'average',
    lossDb: (ab + ba) / 2,
    abDb: ab,
    baDb: ba,
    gainer: abGain ? 'a_to_b' : baGain ? 'b_to_a' : null,
  }
}

/** Loss (dB) of an aligned splice between fibers of mode field diameters `mfd1Um` and `mfd2Um` (Marcuse 1977). */
export function mfdMismatchLossDb(mfd1Um: number, mfd2Um: number): number {
  return spliceCouplingLossDb({ mfd1Um, mfd2Um, offsetUm: 0 })
}

/** Loss (dB) from a lateral core offset between two fibers of the same mode field diameter (Marcuse 1977). */
export function lateralOffsetLossDb(offsetUm: number, mfdUm: number): number {
  return spliceCouplingLossDb({ mfd1Um: mfdUm, mfd2Um: mfdUm, offsetUm })
}

/** Loss (dB) of a splice with both mode field mismatch and lateral offset, Gaussian-mode model (Marcuse 1977). */
export function spliceCouplingLossDb(input: { mfd1Um: number; mfd2Um: number; offsetUm: number }): number {
  const { mfd1Um, mfd2Um, offsetUm } = input
  assertPositive('A mode field diameter', mfd1Um, mfd2Um)
  assertFinite(offsetUm)
  const w1 = mfd1Um / 2
  const w2 = mfd2Um / 2
  // 2·(w1·w2), not 2·w1·w2: the grouping keeps the result bit-for-bit the same with the fibers swapped.
  const sumSq = w1 * w1 + w2 * w2
  const mismatch = (2 * (w1 * w2)) / sumSq
  const transmission = mismatch * mismatch * Math.exp((-2 * offsetUm * offsetUm) / sumSq)
  return Math.max(0, powerFractionToDb(transmission))
}

/** The reading an OTDR shows for a splice of true loss `trueLossDb` when light goes from a fiber of `fromMfdUm` into one of `toMfdUm`. */
export function otdrReadingDb(trueLossDb: number, fromMfdUm: number, toMfdUm: number): number {
  assertFinite(trueLossDb)
  assertPositive('A mode field diameter', fromMfdUm, toMfdUm)
  // Backscatter capture goes as 1/MFD²; halving the round trip leaves 10·log10 of the diameter ratio.
  // This counts mode field only; a different backscatter coefficient would add to it.
  return trueLossDb + 10 * Math.log10(toMfdUm / fromMfdUm)
}

/** Converts a loss in dB to the fraction of power that gets through. */
export function dbToPowerFraction(lossDb: number): number {
  assertFinite(lossDb)
  return 10 ** (-lossDb / 10)
}

/** Converts the fraction of power that gets through to a loss in dB. */
export function powerFractionToDb(fraction: number): number {
  assertPositive('A power fraction', fraction)
  return -10 * Math.log10(fraction)
}

/** Distance (m) to an event from its OTDR round-trip time: d = c·t / (2·n_g). */
export function otdrDistanceM(roundTripSeconds: number, groupIndex: number = defaultGroupIndex): number {
  assertFinite(roundTripSeconds)
  assertPositive('The group index', groupIndex)
  return (speedOfLightMPerS * roundTripSeconds) / (2 * groupIndex)
}

/** Round-trip time (s) of an OTDR pulse to an event `distanceM` away. */
export function otdrRoundTripSeconds(distanceM: number, groupIndex: number = defaultGroupIndex): number {
  assertFinite(distanceM)
  assertPositive('The group index', groupIndex)
  return (2 * groupIndex * distanceM) / speedOfLightMPerS
}

/** Distance from end A of an event seen `dM` from end B of a fiber `lengthM` long (may fall outside 0..length when lengths disagree). */
export function bEndToADistanceM(lengthM: number, dM: number): number {
  assertFinite(lengthM, dM)
  return lengthM - dM
}

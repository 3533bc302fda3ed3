import {
  bEndToADistanceM,
  bidirectionalAverage,
  dbAbove,
  type BidirectionalResult,
  type Direction,
} from './loss'
import type { PathStep } from './fiberPath'

/** What an OTDR's event table calls an event; `end` is the end of the fiber, never matched to a splice. */
export const otdrEventKinds = ['splice', 'connector', 'bend', 'reflective', 'non_reflective', 'end'] as const
export type OtdrEventKind = (typeof otdrEventKinds)[number]

export interface OtdrEventReading {
  distanceM: number
  lossDb: number | null
  kind: OtdrEventKind
}

/** Distance (m) of an event from the path's A end, whichever end the trace was taken from. */
export function distanceFromAM(direction: Direction, fiberLengthM: number, distanceM: number): number {
  return direction === 'a_to_b' ? distanceM : bEndToADistanceM(fiberLengthM, distanceM)
}

export type EventMatch =
  | { kind: 'join'; joinId: string; closureId: string; offsetM: number }
  /** The end of the fiber, or a connector within tolerance of either end of the path (the launch and far-end connectors). */
  | { kind: 'path_end' }
  /** Near no join of the path: possibly a bend or damage. */
  | { kind: 'unmatched' }
  /** Another event of the same trace sits closer to the same join. */
  | { kind: 'duplicate'; joinId: string; closureId: string }

/** Matches each event (distances from A) to the nearest join of the path within `toleranceM`; one event per join, the nearest. */
export function matchEvents(
  events: readonly { atM: number; kind: OtdrEventKind }[],
  joins: readonly PathStep[],
  pathLengthM: number,
  toleranceM: number,
): EventMatch[] {
  const out: EventMatch[] = events.map((event) => {
    if (event.kind === 'end') return { kind: 'path_end' }
    let best: PathStep | null = null
    for (const join of joins) {
      const off = Math.abs(event.atM - join.atM)
      if (off <= toleranceM && (!best || off < Math.abs(event.atM - best.atM))) best = join
    }
    if (best)
      return { kind: 'join', joinId: best.joinId, closureId: best.closureId, offsetM: event.atM - best.atM }
    if (
      event.kind === 'connector' &&
      (Math.abs(event.atM) <= toleranceM || Math.abs(event.atM - pathLengthM) <= toleranceM)
    )
      return { kind: 'path_end' }
    return { kind: 'unmatched' }
  })
  // One reading per join per trace: the nearest event keeps it.
  const nearest = new Map<string, number>()
  out.forEach((m, i) => {
    if (m.kind !== 'join') return
    const held = nearest.get(m.joinId)
    const heldMatch = held === undefined ? undefined : out[held]
    if (heldMatch?.kind !== 'join' || Math.abs(m.offsetM) < Math.abs(heldMatch.offsetM))
      nearest.set(m.joinId, i)
  })
  return out.map((m, i) =>
    m.kind === 'join' && nearest.get(m.joinId) !== i
      ? { kind: 'duplicate', joinId: m.joinId, closureId: m.closureId }
      : m,
  )
}

/** Flags a measured splice result can carry. */
export const measuredFlags = [
  'measured_over_target',
  'measured_over_maximum',
  'one_way',
  'both_negative',
  'estimate_disagrees',
] as const
export type MeasuredFlag = (typeof measuredFlags)[number]

/** The measured loss of one splice at one wavelength from its A→B and B→A readings. */
export function spliceMeasurement(abDb: number | null, baDb: number | null): BidirectionalResult {
  return bidirectionalAverage(abDb, baDb)
}

/** The loss a result stands for: the average, or null when there is none (one-way, both negative, no reading). */
export function measuredLossDb(result: BidirectionalResult): number | null {
  return result.kind === 'average' ? result.lossDb : null
}

/** Flags of one measured result against the project's limit for its wavelength and the splicer's estimate. */
export function flagsForMeasurement(
  result: BidirectionalResult,
  limit: { contractTargetDb: number; standardMaxDb: number } | undefined,
  estimateDb: number | null,
  disagreementDb: number,
): MeasuredFlag[] {
  const flags: MeasuredFlag[] = []
  if (result.kind === 'one_way') flags.push('one_way')
  if (result.kind === 'both_negative') flags.push('both_negative')
  if (result.kind !== 'average') return flags
  if (limit && dbAbove(result.lossDb, limit.standardMaxDb)) flags.push('measured_over_maximum')
  else if (limit && dbAbove(result.lossDb, limit.contractTargetDb)) flags.push('measured_over_target')
  if (estimateDb !== null && dbAbove(Math.abs(result.lossDb - estimateDb), disagreementDb))
    flags.push('estimate_disagrees')
  return flags
}

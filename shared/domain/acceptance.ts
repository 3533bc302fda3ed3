import {
  spliceFlags,
  type ClosureState,
  type SpliceFlag,
  type SpliceStatus,
  type Wavelength,
} from '../schemas/enums'
import type { LossLimit, ProjectLimits } from '../schemas/project'
import type { Splice } from '../schemas/splice'
import { dbAbove, type BidirectionalResult } from './loss'
import { fiberEndKey, samePair, type SlottedPair } from './plan'

/** The parts of a splice its assessment reads. */
export type AssessedSplice = Pick<
  Splice,
  | 'id'
  | 'closureId'
  | 'trayId'
  | 'slot'
  | 'cableAId'
  | 'fiberA'
  | 'cableBId'
  | 'fiberB'
  | 'lossDb'
  | 'attempt'
  | 'acceptReason'
  | 'supersedesId'
>

/** Another splice of the project, as far as fiber and slot reuse are concerned. */
export type NeighbourSplice = Pick<
  Splice,
  'id' | 'closureId' | 'trayId' | 'slot' | 'cableAId' | 'fiberA' | 'cableBId' | 'fiberB'
>

/** An OTDR result for the splice at one wavelength. */
export type MeasuredLoss = { wavelength: Wavelength; result: BidirectionalResult }

export type AssessmentContext = {
  /** The plan row for the splice's tray slot, or null when the plan leaves that slot empty. */
  planRow: SlottedPair | null
  /** Current attempts of the closure (others, or including this one: it is skipped by id). */
  otherCurrentSplices: readonly NeighbourSplice[]
  closureState: ClosureState
  measured?: MeasuredLoss | readonly MeasuredLoss[] | null
  /** The project's allowed difference between estimated and measured loss; no check when absent. */
  disagreementDb?: number | null
}

export type Assessment = {
  status: SpliceStatus
  /** Every check raised, in the order of `spliceFlags`. */
  flags: SpliceFlag[]
  /** The loss the status was judged on. */
  lossDb: number | null
  basis: 'estimate' | 'measured' | null
  wavelength: Wavelength | null
  limit: LossLimit | null
  needsReview: boolean
}

// Worst first wins when several measurements are judged; 'no_reading' never beats a reading.
const statusRank: Record<SpliceStatus, number> = {
  no_reading: 0,
  ok: 1,
  accepted_with_flag: 2,
  over_target: 3,
  over_maximum: 4,
}

// Flags that inform but ask nobody to act: a one-direction gain is judged on the average.
const informational = new Set<SpliceFlag>(['gainer_one_way', 'one_way_only'])

/** Picks the limits for a measurement at `wavelength`, or the estimate limits when none are set for it (or for an estimate). */
export function limitFor(limits: ProjectLimits, wavelength: Wavelength | null): LossLimit {
  if (wavelength === null) return limits.estimate
  return limits.perWavelength.find((row) => row.wavelength === wavelength) ?? limits.estimate
}

/**
 * Judges one loss value against a limit: over the maximum always fails; over the target is
 * 'accepted_with_flag' only from attempt `attemptsBeforeAcceptWithFlag` on and with an accept reason.
 */
export function lossStatus(
  lossDb: number | null,
  limit: LossLimit,
  splice: Pick<Splice, 'attempt' | 'acceptReason'>,
  attemptsBeforeAcceptWithFlag: number,
): { status: SpliceStatus; flags: SpliceFlag[] } {
  if (lossDb === null) return { status: 'no_reading', flags: [] }
  if (dbAbove(lossDb, limit.standardMaxDb))
    return { status: 'over_maximum', flags: ['over_target', 'over_maximum'] }
  if (!dbAbove(lossDb, limit.contractTargetDb)) return { status: 'ok', flags: [] }
  if (splice.attempt < attemptsBeforeAcceptWithFlag) return { status: 'over_target', flags: ['over_target'] }
  const accepted = splice.acceptReason !== null && splice.acceptReason.trim() !== ''
  return {
    status: accepted ? 'accepted_with_flag' : 'over_target',
    flags: ['over_target', 'attempts_exhausted'],
  }
}

/**
 * Assesses a logged splice against the project's limits, its plan row and the closure's other current splices.
 *
 * The loss is judged on the OTDR bidirectional averages when there are any (each against its
 * wavelength's limits, the worst counting), otherwise on the splicer's estimate; one-way and
 * both-negative results never decide the status. `plan_mismatch` means the slot has no plan row, or
 * the row's tray, slot or fiber pair (either orientation) differs. `fiber_reused` and `slot_reused`
 * look only at other current splices of the same closure, skipping this splice and the one it replaces.
 */
export function assessSplice(
  splice: AssessedSplice,
  limits: ProjectLimits,
  context: AssessmentContext,
): Assessment {
  const flags = new Set<SpliceFlag>()
  const measured = context.measured
    ? 'result' in context.measured
      ? [context.measured]
      : context.measured
    : []

  type Evidence = { lossDb: number; wavelength: Wavelength | null; basis: 'estimate' | 'measured' }
  const evidence: Evidence[] = []
  const averagedAt = new Set(measured.filter((m) => m.result.kind === 'average').map((m) => m.wavelength))
  for (const { wavelength, result } of measured) {
    if (result.kind === 'both_negative') flags.add('both_negative')
    if (result.kind === 'one_way' && !averagedAt.has(wavelength)) flags.add('one_way_only')
    if (result.kind !== 'average') continue
    evidence.push({ lossDb: result.lossDb, wavelength, basis: 'measured' })
    if (result.gainer) flags.add('gainer_one_way')
    const allowed = context.disagreementDb
    if (
      allowed != null &&
      splice.lossDb !== null &&
      dbAbove(Math.abs(result.lossDb - splice.lossDb), allowed)
    ) {
      flags.add('estimate_disagrees')
    }
  }
  if (evidence.length === 0 && splice.lossDb !== null) {
    evidence.push({ lossDb: splice.lossDb, wavelength: null, basis: 'estimate' })
  }

  let judged: { status: SpliceStatus; evidence: Evidence | null; limit: LossLimit | null } = {
    status: 'no_reading',
    evidence: null,
    limit: null,
  }
  for (const item of evidence) {
    const limit = limitFor(limits, item.wavelength)
    const verdict = lossStatus(item.lossDb, limit, splice, limits.attemptsBeforeAcceptWithFlag)
    verdict.flags.forEach((flag) => flags.add(flag))
    if (judged.evidence === null || statusRank[verdict.status] > statusRank[judged.status]) {
      judged = { status: verdict.status, evidence: item, limit }
    }
  }

  const row = context.planRow
  if (!row || row.trayId !== splice.trayId || row.slot !== splice.slot || !samePair(row, splice)) {
    flags.add('plan_mismatch')
  }

  const ends = new Set([
    fiberEndKey(splice.cableAId, splice.fiberA),
    fiberEndKey(splice.cableBId, splice.fiberB),
  ])
  for (const other of context.otherCurrentSplices) {
    if (other.id === splice.id || other.id === splice.supersedesId || other.closureId !== splice.closureId)
      continue
    if (
      ends.has(fiberEndKey(other.cableAId, other.fiberA)) ||
      ends.has(fiberEndKey(other.cableBId, other.fiberB))
    ) {
      flags.add('fiber_reused')
    }
    if (other.trayId === splice.trayId && other.slot === splice.slot && !samePair(other, splice)) {
      flags.add('slot_reused')
    }
  }

  if (splice.attempt > 1) flags.add('resplice')
  if (context.closureState === 'signed_off') flags.add('closure_signed_off')

  const ordered = spliceFlags.filter((flag) => flags.has(flag))
  return {
    status: judged.status,
    flags: ordered,
    lossDb: judged.evidence?.lossDb ?? null,
    basis: judged.evidence?.basis ?? null,
    wavelength: judged.evidence?.wavelength ?? null,
    limit: judged.limit,
    needsReview: ordered.some((flag) => !informational.has(flag)),
  }
}

/** Keeps the current attempts: every splice that no other splice in the list supersedes. */
export function currentAttempts<T extends Pick<Splice, 'id' | 'supersedesId'>>(splices: readonly T[]): T[] {
  const superseded = new Set<string>()
  for (const splice of splices) if (splice.supersedesId !== null) superseded.add(splice.supersedesId)
  return splices.filter((splice) => !superseded.has(splice.id))
}

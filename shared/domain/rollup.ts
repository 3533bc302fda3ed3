import { defaultPhotoRules, type PhotoRules, type ProjectLimits } from '../schemas/project'
import type { Splice } from '../schemas/splice'
import { currentAttempts, lossStatus } from './acceptance'
import { toMilliDb } from './loss'
import { pairKey, samePair, slotKey, type SlottedPair } from './plan'

/** The parts of a splice a roll-up reads. */
export type RollupSplice = Pick<
  Splice,
  | 'id'
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

/**
 * Running totals of a closure's splices, kept so the server can update them one splice at a time.
 * Losses are held in whole thousandths of a dB so that sums are exact and independent of order.
 */
export type SpliceTotals = {
  /** Every attempt recorded, current or superseded. */
  attempts: number
  current: number
  /** Current attempts with an estimated loss. */
  withLoss: number
  lossMilliDb: number
  overTarget: number
  overMaximum: number
  acceptedWithFlag: number
}

/** Totals of a closure with no splices. */
export function emptyTotals(): SpliceTotals {
  return {
    attempts: 0,
    current: 0,
    withLoss: 0,
    lossMilliDb: 0,
    overTarget: 0,
    overMaximum: 0,
    acceptedWithFlag: 0,
  }
}

function contribution(
  splice: RollupSplice,
  limits: ProjectLimits,
): Omit<SpliceTotals, 'attempts' | 'current'> {
  const { status } = lossStatus(splice.lossDb, limits.estimate, splice, limits.attemptsBeforeAcceptWithFlag)
  return {
    withLoss: splice.lossDb === null ? 0 : 1,
    lossMilliDb: splice.lossDb === null ? 0 : toMilliDb(splice.lossDb),
    overTarget:
      status === 'over_target' || status === 'accepted_with_flag' || status === 'over_maximum' ? 1 : 0,
    overMaximum: status === 'over_maximum' ? 1 : 0,
    acceptedWithFlag: status === 'accepted_with_flag' ? 1 : 0,
  }
}

function shift(
  totals: SpliceTotals,
  part: Omit<SpliceTotals, 'attempts' | 'current'>,
  sign: 1 | -1,
): SpliceTotals {
  return {
    attempts: totals.attempts,
    current: totals.current + sign,
    withLoss: totals.withLoss + sign * part.withLoss,
    lossMilliDb: totals.lossMilliDb + sign * part.lossMilliDb,
    overTarget: totals.overTarget + sign * part.overTarget,
    overMaximum: totals.overMaximum + sign * part.overMaximum,
    acceptedWithFlag: totals.acceptedWithFlag + sign * part.acceptedWithFlag,
  }
}

/**
 * Adds a newly recorded attempt to the totals; pass `{ current: false }` when a splice already
 * recorded supersedes it (it arrived late), so it counts as an attempt only.
 */
export function addToTotals(
  totals: SpliceTotals,
  splice: RollupSplice,
  limits: ProjectLimits,
  options: { current?: boolean } = {},
): SpliceTotals {
  const counted = { ...totals, attempts: totals.attempts + 1 }
  return options.current === false ? counted : shift(counted, contribution(splice, limits), 1)
}

/** Takes a current attempt out of the current totals because another attempt now supersedes it (it stays an attempt). */
export function removeFromTotals(
  totals: SpliceTotals,
  splice: RollupSplice,
  limits: ProjectLimits,
): SpliceTotals {
  return shift(totals, contribution(splice, limits), -1)
}

/** Computes the totals of a closure's splices in one pass; equal to adding them one by one. */
export function totalsOf(splices: readonly RollupSplice[], limits: ProjectLimits): SpliceTotals {
  let totals = { ...emptyTotals(), attempts: splices.length }
  for (const splice of currentAttempts(splices)) totals = shift(totals, contribution(splice, limits), 1)
  return totals
}

/** Turns totals into the figures people read: dB sums and means, re-splice count. */
export function summarizeTotals(totals: SpliceTotals): {
  current: number
  totalLossDb: number
  meanLossDb: number | null
  resplices: number
  overTarget: number
  overMaximum: number
  acceptedWithFlag: number
} {
  return {
    current: totals.current,
    totalLossDb: totals.lossMilliDb / 1000,
    meanLossDb: totals.withLoss === 0 ? null : totals.lossMilliDb / totals.withLoss / 1000,
    resplices: totals.attempts - totals.current,
    overTarget: totals.overTarget,
    overMaximum: totals.overMaximum,
    acceptedWithFlag: totals.acceptedWithFlag,
  }
}

/** Photos already taken: per splice id, per tray id, and of the closed closure. */
export type PhotoCounts = {
  perSplice?: Readonly<Record<string, number>>
  perTray?: Readonly<Record<string, number>>
  closure?: number
}

export type ClosureRollup = {
  planned: number
  /** Planned fiber pairs whose current attempt is logged. */
  logged: number
  /** Current splices joining a pair the plan does not have. */
  offPlan: number
  completionPct: number
  current: number
  totalLossDb: number
  meanLossDb: number | null
  maxLossDb: number | null
  /** Current splices above the estimate target, including those above the maximum. */
  overTarget: number
  overMaximum: number
  acceptedWithFlag: number
  /** Attempts superseded by a later one. */
  resplices: number
  /** Current splices whose slot has no plan row or a different pair. */
  mismatches: number
  /** Current splices with at least one photo. */
  photos: number
  missingPhotos: { splices: number; trays: number; closure: number; total: number }
}

/**
 * Rolls a closure's plan and splices up into its progress and loss figures, judged on estimated
 * loss against the project's estimate limits; the result does not depend on the order of splices.
 */
export function rollUpClosure(
  plan: readonly SlottedPair[],
  splices: readonly RollupSplice[],
  limits: ProjectLimits,
  options: { photoCounts?: PhotoCounts; photoRules?: PhotoRules } = {},
): ClosureRollup {
  const counts = options.photoCounts ?? {}
  const rules = options.photoRules ?? defaultPhotoRules
  const current = currentAttempts(splices)
  const summary = summarizeTotals(totalsOf(splices, limits))

  const currentPairs = new Set(current.map(pairKey))
  const plannedPairs = new Set(plan.map(pairKey))
  const logged = plan.filter((row) => currentPairs.has(pairKey(row))).length
  const offPlan = current.filter((splice) => !plannedPairs.has(pairKey(splice))).length
  const rowBySlot = new Map<string, SlottedPair>()
  for (const row of plan)
    if (!rowBySlot.has(slotKey(row.trayId, row.slot))) rowBySlot.set(slotKey(row.trayId, row.slot), row)
  const mismatches = current.filter((splice) => {
    const row = rowBySlot.get(slotKey(splice.trayId, splice.slot))
    return row === undefined || !samePair(row, splice)
  }).length

  let maxMilliDb: number | null = null
  for (const splice of current) {
    if (splice.lossDb === null) continue
    const milli = toMilliDb(splice.lossDb)
    if (maxMilliDb === null || milli > maxMilliDb) maxMilliDb = milli
  }

  const photoCount = (id: string) => counts.perSplice?.[id] ?? 0
  const photos = current.filter((splice) => photoCount(splice.id) > 0).length
  const needsPhoto = (splice: RollupSplice) => {
    if (rules.perSplice === 'always') return true
    if (rules.perSplice === 'none') return false
    return contribution(splice, limits).overTarget === 1
  }
  const missingSplices = current.filter((splice) => needsPhoto(splice) && photoCount(splice.id) === 0).length
  const traysInUse = new Set([...plan.map((row) => row.trayId), ...current.map((splice) => splice.trayId)])
  const missingTrays = rules.perTray
    ? [...traysInUse].filter((id) => (counts.perTray?.[id] ?? 0) === 0).length
    : 0
  const missingClosure = rules.closedClosure && (counts.closure ?? 0) === 0 ? 1 : 0

  return {
    planned: plan.length,
    logged,
    offPlan,
    completionPct: plan.length === 0 ? 0 : Math.round((logged / plan.length) * 1000) / 10,
    current: summary.current,
    totalLossDb: summary.totalLossDb,
    meanLossDb: summary.meanLossDb,
    maxLossDb: maxMilliDb === null ? null : maxMilliDb / 1000,
    overTarget: summary.overTarget,
    overMaximum: summary.overMaximum,
    acceptedWithFlag: summary.acceptedWithFlag,
    resplices: summary.resplices,
    mismatches,
    photos,
    missingPhotos: {
      splices: missingSplices,
      trays: missingTrays,
      closure: missingClosure,
      total: missingSplices + missingTrays + missingClosure,
    },
  }
}

export type ProductionRow = {
  splicerId: string
  day: string
  splices: number
  resplices: number
  overTarget: number
}

/**
 * Counts each splicer's work per local day (every attempt made, re-splices among them, and those
 * over the estimate target), days taken at a fixed offset from UTC, sorted by day then splicer.
 */
export function productionByDay(
  splices: readonly (RollupSplice & Pick<Splice, 'splicerId' | 'splicedAt'>)[],
  options: { timeZoneOffsetMinutes: number; limits: ProjectLimits },
): ProductionRow[] {
  const rows = new Map<string, ProductionRow>()
  for (const splice of splices) {
    const instant = Date.parse(splice.splicedAt)
    if (Number.isNaN(instant))
      throw new RangeError(`Splice ${splice.id} has no readable time: ${splice.splicedAt}.`)
    // A fixed offset, not a zone: the caller passes the crew's offset for the period reported.
    const day = new Date(instant + options.timeZoneOffsetMinutes * 60_000).toISOString().slice(0, 10)
    const key = `${day} ${splice.splicerId}`
    const row = rows.get(key) ?? { splicerId: splice.splicerId, day, splices: 0, resplices: 0, overTarget: 0 }
    row.splices += 1
    if (splice.attempt > 1) row.resplices += 1
    row.overTarget += contribution(splice, options.limits).overTarget
    rows.set(key, row)
  }
  return [...rows.values()].sort((x, y) =>
    x.day === y.day
      ? x.splicerId < y.splicerId
        ? -1
        : x.splicerId > y.splicerId
          ? 1
          : 0
      : x.day < y.day
        ? -1
        : 1,
  )
}

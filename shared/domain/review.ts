import type { SpliceFlag } from '../schemas/enums'
import type { PhotoRules, ProjectLimits } from '../schemas/project'
import type { Splice } from '../schemas/splice'
import { assessSplice, currentAttempts, type AssessedSplice } from './acceptance'
import { slotKey, type SlottedPair } from './plan'
import { rollUpClosure, type ClosureRollup, type PhotoCounts } from './rollup'

/** A foreman's verdict on a splice: kept as it is, or sent back to the splicer to be made again. */
export type ReviewVerdict = 'accepted' | 'sent_back'

/** A splice as the review reads it. */
export type ReviewedSplice = AssessedSplice &
  Pick<Splice, 'respliceReason' | 'splicerId'> & { reviewState: ReviewVerdict | null }

export type ReviewItem<S extends ReviewedSplice = ReviewedSplice> = {
  splice: S
  flags: SpliceFlag[]
  /** What the foreman should do about it, one line per flag that asks for action. */
  advice: string[]
  /** Over the standard maximum: the splice must be made again, accepting it is not offered. */
  mustRemake: boolean
  /** Open until accepted, or until every flag is explained on the record (a re-splice with its reason). */
  open: boolean
}

// Flags that inform or are explained by the splicer's own record rather than asking the foreman to act.
const selfExplained = new Set<SpliceFlag>([
  'resplice',
  'gainer_one_way',
  'one_way_only',
  'closure_signed_off',
])

function adviceFor(flag: SpliceFlag, splice: ReviewedSplice, limits: ProjectLimits): string | null {
  switch (flag) {
    case 'over_maximum':
      return `Over the ${limits.estimate.standardMaxDb} dB maximum: it must be made again — send it back.`
    case 'over_target':
      return splice.attempt < limits.attemptsBeforeAcceptWithFlag
        ? `Over the ${limits.estimate.contractTargetDb} dB target with attempts left: send it back for a re-splice, or accept it with a reason.`
        : null
    case 'attempts_exhausted':
      return splice.acceptReason
        ? `Over target after ${splice.attempt} attempts; the splicer says: "${splice.acceptReason}". Accept it with your reason or send it back.`
        : `Over target after ${splice.attempt} attempts with no reason given: accept it with a reason or send it back.`
    case 'plan_mismatch':
      return 'Not the pair the plan puts in this slot: send it back to splice the planned pair, or accept it with a reason and tell the office the plan is wrong.'
    case 'fiber_reused':
      return 'A fiber of this splice is used by another splice in the closure: send one of them back.'
    case 'slot_reused':
      return 'Another splice holds this slot: send one of them back.'
    case 'estimate_disagrees':
      return 'The estimate and the OTDR reading disagree: check the splice and the trace.'
    case 'both_negative':
      return 'Both OTDR directions read a gain: check the trace before accepting.'
    default:
      return null
  }
}

/**
 * The splices of a closure that need the foreman: every current splice whose checks ask for review,
 * judged with the shared acceptance rules against the plan and the closure's other current splices.
 */
export function reviewItems<S extends ReviewedSplice>(
  plan: readonly SlottedPair[],
  splices: readonly S[],
  limits: ProjectLimits,
): ReviewItem<S>[] {
  const current = currentAttempts(splices)
  const rowBySlot = new Map(plan.map((row) => [slotKey(row.trayId, row.slot), row]))
  const items: ReviewItem<S>[] = []
  for (const splice of current) {
    const assessment = assessSplice(splice, limits, {
      planRow: rowBySlot.get(slotKey(splice.trayId, splice.slot)) ?? null,
      otherCurrentSplices: current,
      closureState: 'in_progress',
    })
    if (!assessment.needsReview && splice.reviewState === null) continue
    const flags = assessment.flags
    const advice = flags.flatMap((flag) => adviceFor(flag, splice, limits) ?? [])
    if (flags.includes('resplice'))
      advice.push(
        `Made again (attempt ${splice.attempt}); reason on record: ${splice.respliceReason?.replace(/_/g, ' ') ?? 'none'}.`,
      )
    const explained = flags.every((flag) => selfExplained.has(flag))
    items.push({
      splice,
      flags,
      advice,
      mustRemake: flags.includes('over_maximum'),
      open: splice.reviewState !== 'accepted' && !(explained && splice.reviewState === null),
    })
  }
  return items.sort((a, b) =>
    a.splice.trayId === b.splice.trayId
      ? a.splice.slot - b.splice.slot
      : a.splice.trayId < b.splice.trayId
        ? -1
        : 1,
  )
}

export type ChecklistItem = {
  key: 'all_logged' | 'flags_resolved' | 'photos'
  label: string
  ok: boolean
  detail: string
}

export type SignOffChecklist = { ok: boolean; items: ChecklistItem[]; rollup: ClosureRollup }

const plural = (n: number, one: string, many = `${one}s`) => `${n} ${n === 1 ? one : many}`

/**
 * The sign-off checklist of a closure: every planned splice logged, every flag resolved (accepted) or
 * explained on the record, and the project's photo rules met; a closure signs off only when all pass.
 */
export function signOffChecklist(
  plan: readonly SlottedPair[],
  splices: readonly ReviewedSplice[],
  limits: ProjectLimits,
  photos: { counts: PhotoCounts; rules: PhotoRules },
): SignOffChecklist {
  const rollup = rollUpClosure(plan, splices, limits, {
    photoCounts: photos.counts,
    photoRules: photos.rules,
  })
  const items = reviewItems(plan, splices, limits)
  const sentBack = items.filter((item) => item.splice.reviewState === 'sent_back').length
  const waiting = items.filter((item) => item.open).length - sentBack
  const missing = rollup.missingPhotos
  const missingParts = [
    missing.splices ? plural(missing.splices, 'splice photo') : '',
    missing.trays ? plural(missing.trays, 'tray photo') : '',
    missing.closure ? 'the closed-closure photo' : '',
  ].filter(Boolean)
  const checks: ChecklistItem[] = [
    {
      key: 'all_logged',
      label: 'Every planned splice logged',
      ok: rollup.planned > 0 && rollup.logged === rollup.planned,
      detail:
        rollup.planned === 0
          ? 'The closure has no plan yet.'
          : `${rollup.logged} of ${rollup.planned} planned splices logged.`,
    },
    {
      key: 'flags_resolved',
      label: 'Every flag resolved or explained',
      ok: waiting === 0 && sentBack === 0,
      detail:
        waiting === 0 && sentBack === 0
          ? `${plural(items.length, 'flagged splice')}, all resolved or explained.`
          : [
              waiting ? `${plural(waiting, 'splice')} waiting for review` : '',
              sentBack ? `${plural(sentBack, 'splice')} sent back, waiting for a re-splice` : '',
            ]
              .filter(Boolean)
              .join('; ') + '.',
    },
    {
      key: 'photos',
      label: 'Photo rules met',
      ok: missing.total === 0,
      detail:
        missing.total === 0
          ? 'Every photo the project asks for is taken.'
          : `Missing: ${missingParts.join(', ')}.`,
    },
  ]
  return { ok: checks.every((check) => check.ok), items: checks, rollup }
}

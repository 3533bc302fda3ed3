import type { SpliceFlag } from '#shared/schemas/enums'

/** How each check on a splice reads to the foreman and the inspector. */
export const flagLabels: Record<SpliceFlag, string> = {
  over_target: 'Over target',
  over_maximum: 'Over maximum',
  attempts_exhausted: 'Attempts used up',
  gainer_one_way: 'Gain one way',
  both_negative: 'Gain both ways',
  one_way_only: 'One direction only',
  estimate_disagrees: 'Estimate disagrees with OTDR',
  plan_mismatch: 'Wrong pair / off plan',
  fiber_reused: 'Fiber used twice',
  slot_reused: 'Slot used twice',
  resplice: 'Re-spliced',
  closure_signed_off: 'Closure signed off',
}

/** Words for a verdict, for the review list and the inspector's record. */
export function verdictText(
  state: 'accepted' | 'sent_back' | null,
  reason: string | null | undefined,
): string {
  if (state === 'accepted') return reason ? `Accepted by the foreman: ${reason}` : 'Accepted by the foreman'
  if (state === 'sent_back')
    return reason ? `Sent back to the splicer: ${reason}` : 'Sent back to the splicer'
  return 'Not reviewed yet'
}

/** A time as the crew reads it: day and hour, local. */
export function whenText(iso: string | null): string {
  if (!iso) return 'No activity yet'
  const at = new Date(iso)
  return `${at.toLocaleDateString([], { day: 'numeric', month: 'short' })} ${at.toLocaleTimeString([], {
    hour: '2-digit',
    minute: '2-digit',
    hour12: false,
  })}`
}

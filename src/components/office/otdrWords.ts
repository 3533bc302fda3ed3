import type { MeasuredFlag } from '#shared/domain/otdr'
import type { FiberPathEnd, MeasuredResult } from '#shared/schemas/otdr'

/** Words for the reconciliation flags (shared/domain/otdr.ts `flagsForMeasurement`). */
export const flagLabels: Record<MeasuredFlag, string> = {
  measured_over_target: 'Over the contract target',
  measured_over_maximum: 'Over the standard maximum',
  one_way: 'One direction only',
  both_negative: 'Both directions negative: check the event matching',
  estimate_disagrees: 'Estimate and measurement disagree',
}

export const kindLabels: Record<MeasuredResult['kind'], string> = {
  average: 'Bidirectional average',
  one_way: 'One way only, not averaged',
  both_negative: 'Both negative, not averaged',
  no_reading: 'No reading',
}

/** A loss in dB with three decimals and its sign when negative; a dash when there is none. */
export function db(value: number | null | undefined): string {
  if (value === null || value === undefined) return '—'
  return `${value.toFixed(3)} dB`
}

/** A distance in metres, whole. */
export function metres(value: number | null | undefined): string {
  if (value === null || value === undefined) return '—'
  return `${Math.round(value).toLocaleString('en-US')} m`
}

export const sourceLabels = {
  measured: 'measured',
  estimated: 'estimated',
  allowance: 'allowance (not logged)',
} as const

/** How a traced path ends, in words; `closureLabel` names a closure by id. */
export function endText(end: FiberPathEnd, closureLabel: (id: string) => string): string {
  switch (end.kind) {
    case 'terminal':
      return 'Terminal: leaves the plant through a connector pair'
    case 'dead_end':
      return `Dead end at ${closureLabel(end.closureId)}: no splice continues the fiber there`
    case 'loop':
      return 'Loop: the splices lead back to a fiber already on the path; tracing stopped'
    case 'branch':
      return `Branch: ${end.joinIds.length} splices continue from the same fiber; tracing stopped`
  }
}

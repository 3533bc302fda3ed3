import type { RespliceReason, SpliceMethod } from '#shared/schemas/enums'
import type { Splice } from '#shared/schemas/splice'

/** Both fiber ends of a splice as the splicer confirms them. */
export type SpliceEnds = { cableAId: string; fiberA: number; cableBId: string; fiberB: number }

/** What the splice panel hands over when the splicer taps Save. */
export interface SpliceEntry extends SpliceEnds {
  trayId: string
  slot: number
  method: SpliceMethod
  lossDb: number | null
  notes: string
  acceptReason: string | null
  /** Set for a later attempt at the same pair. */
  resplice: { previous: Splice; reason: RespliceReason; note: string } | null
  /** Set when changing a splice already logged (no new attempt). */
  edit: Splice | null
  photo: File | null
  /** After saving, open the same slot again for the next attempt. */
  thenResplice: boolean
}

export const methodOptions: { value: SpliceMethod; label: string }[] = [
  { value: 'single_fusion', label: 'Fusion' },
  { value: 'ribbon_fusion', label: 'Ribbon' },
  { value: 'mechanical', label: 'Mechanical' },
]

/** The ends a panel opens with: the logged splice's, else the plan's, else the closure's first two cables. */
export function initialEnds(
  current: SpliceEnds | null,
  planned: SpliceEnds | null,
  cables: readonly { id: string }[],
): SpliceEnds {
  const from = current ?? planned
  if (from)
    return { cableAId: from.cableAId, fiberA: from.fiberA, cableBId: from.cableBId, fiberB: from.fiberB }
  const first = cables[0]?.id ?? ''
  return { cableAId: first, fiberA: 1, cableBId: cables[1]?.id ?? first, fiberB: 1 }
}

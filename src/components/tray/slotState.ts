import {
  matAltRoute,
  matCheckCircle,
  matCropFree,
  matRadioButtonUnchecked,
  matReplay,
} from '@quasar/extras/material-icons'
import { lossStatus } from '#shared/domain/acceptance'
import { samePair, type SlottedPair } from '#shared/domain/plan'
import type { LossLimit } from '#shared/schemas/project'
import type { Splice } from '#shared/schemas/splice'
import type { Tray } from '#shared/schemas/tray'
import type { FiberCable } from '../fiber/types'
import { formatDb, statusIcons, type Verdict } from '../splice/lossVerdict'

/** The parts of a current splice a tray slot shows. */
export type SlotSplice = Pick<
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
>

export type SlotState =
  'todo' | 'unplanned' | 'logged' | 'resplice' | 'over_target' | 'accepted' | 'over_maximum' | 'off_plan'

/**
 * Says where a tray slot stands: nothing logged (to do, or not in the plan), or its current splice
 * judged by its estimated loss; a splice whose fiber pair differs from the plan is off-plan first of all.
 */
export function slotVerdict(
  planned: SlottedPair | null,
  splice: SlotSplice | null,
  limit: LossLimit,
  attemptsBeforeAcceptWithFlag: number,
): Verdict & { state: SlotState } {
  if (!splice) {
    return planned
      ? { state: 'todo', tone: 'neutral', icon: matRadioButtonUnchecked, text: 'To do' }
      : { state: 'unplanned', tone: 'neutral', icon: matCropFree, text: 'Not in the plan' }
  }
  const loss = splice.lossDb === null ? 'no reading' : formatDb(splice.lossDb)
  const attempt = splice.attempt > 1 ? ` · attempt ${splice.attempt}` : ''
  if (!planned || !samePair(planned, splice)) {
    return { state: 'off_plan', tone: 'bad', icon: matAltRoute, text: `Off plan · ${loss}${attempt}` }
  }
  const { status } = lossStatus(splice.lossDb, limit, splice, attemptsBeforeAcceptWithFlag)
  const icon = statusIcons[status]
  const worded = `${loss}${attempt}`
  if (status === 'over_maximum')
    return { state: 'over_maximum', tone: 'bad', icon, text: `Over maximum · ${worded}` }
  if (status === 'over_target')
    return { state: 'over_target', tone: 'warn', icon, text: `Over target · ${worded}` }
  if (status === 'accepted_with_flag') {
    return { state: 'accepted', tone: 'warn', icon, text: `Accepted with flag · ${worded}` }
  }
  if (splice.attempt > 1) {
    return {
      state: 'resplice',
      tone: 'info',
      icon: matReplay,
      text: `Re-spliced (attempt ${splice.attempt}) · ${loss}`,
    }
  }
  const text = splice.lossDb === null ? 'Logged · no reading' : loss
  return { state: 'logged', tone: 'ok', icon: matCheckCircle, text }
}

/** One line of a tray's slot list: the slot, its planned pair and where it stands. */
export type SlotRow = Verdict & {
  state: SlotState
  slot: number
  planned: SlottedPair | null
  actual: string
}

/**
 * Lists every slot of a tray in order with its planned pair and state. Plan rows and splices of other
 * trays are skipped; one pass builds the slot maps, so the cost grows with the tray, not the closure.
 */
export function traySlotRows(
  tray: Pick<Tray, 'id' | 'capacity'>,
  plan: readonly SlottedPair[],
  splices: readonly SlotSplice[],
  cables: Readonly<Record<string, FiberCable | undefined>>,
  limit: LossLimit,
  attemptsBeforeAcceptWithFlag: number,
): SlotRow[] {
  const planned = new Map<number, SlottedPair>()
  for (const row of plan) if (row.trayId === tray.id) planned.set(row.slot, row)
  const spliced = new Map<number, SlotSplice[]>()
  for (const splice of splices) {
    if (splice.trayId !== tray.id) continue
    const list = spliced.get(splice.slot)
    if (list) list.push(splice)
    else spliced.set(splice.slot, [splice])
  }
  const end = (cableId: string, fiber: number) => `${cables[cableId]?.label ?? 'unknown cable'} #${fiber}`

  return Array.from({ length: tray.capacity }, (_, i) => {
    const slot = i + 1
    const row = planned.get(slot) ?? null
    const here = spliced.get(slot) ?? []
    const splice = here[0] ?? null
    const verdict = slotVerdict(row, splice, limit, attemptsBeforeAcceptWithFlag)
    const notes: string[] = []
    if (verdict.state === 'off_plan' && splice) {
      notes.push(`Spliced ${end(splice.cableAId, splice.fiberA)} ↔ ${end(splice.cableBId, splice.fiberB)}`)
    }
    if (here.length > 1) notes.push(`${here.length} splices logged in this slot`)
    return { slot, planned: row, ...verdict, actual: notes.join(' · ') }
  })
}

import type { PlanRowDraft } from '../schemas/planRow'

/** The two fiber ends a splice joins; A and B are the plan's orientation, not a direction of light. */
export type FiberPair = { cableAId: string; fiberA: number; cableBId: string; fiberB: number }

/** A fiber pair placed in a tray slot. */
export type SlottedPair = FiberPair & { trayId: string; slot: number }

export type PlanCable = { id: string; fiberCount: number; label?: string }
export type PlanTray = { id: string; number: number; capacity: number }

/** Keys one fiber end of a cable. */
export function fiberEndKey(cableId: string, fiber: number): string {
  return `${cableId}#${fiber}`
}

/** Keys a fiber pair the same whichever side was written as A. */
export function pairKey(pair: FiberPair): string {
  const a = fiberEndKey(pair.cableAId, pair.fiberA)
  const b = fiberEndKey(pair.cableBId, pair.fiberB)
  return a < b ? `${a}|${b}` : `${b}|${a}`
}

/** Tells whether two records join the same two fiber ends, in either orientation. */
export function samePair(x: FiberPair, y: FiberPair): boolean {
  // Compared end by end rather than through pairKey: it runs for every neighbour of every pushed splice.
  const asWritten =
    x.cableAId === y.cableAId && x.fiberA === y.fiberA && x.cableBId === y.cableBId && x.fiberB === y.fiberB
  const swapped =
    x.cableAId === y.cableBId && x.fiberA === y.fiberB && x.cableBId === y.cableAId && x.fiberB === y.fiberA
  return asWritten || swapped
}

/** Keys a tray slot. */
export function slotKey(trayId: string, slot: number): string {
  return `${trayId}#${slot}`
}

/** Finds the plan row for a tray slot, or null when the plan leaves that slot empty. */
export function planRowForSlot<T extends SlottedPair>(
  plan: readonly T[],
  trayId: string,
  slot: number,
): T | null {
  return plan.find((row) => row.trayId === trayId && row.slot === slot) ?? null
}

export const planProblemCodes = [
  'unknown_cable',
  'fiber_out_of_range',
  'same_fiber_both_sides',
  'fiber_used_twice',
  'unknown_tray',
  'slot_out_of_capacity',
  'duplicate_slot',
] as const
export type PlanProblemCode = (typeof planProblemCodes)[number]

/** One thing wrong with a plan: `index` is 0-based for code, `row` 1-based for people. */
export type PlanProblem = {
  index: number
  row: number
  code: PlanProblemCode
  field: 'cableAId' | 'fiberA' | 'cableBId' | 'fiberB' | 'trayId' | 'slot'
  message: string
}

/** Checks a closure's splice plan and returns every problem found, in row order. */
export function validatePlan(
  rows: readonly SlottedPair[],
  refs: { cables: readonly PlanCable[]; trays: readonly PlanTray[] },
): PlanProblem[] {
  const cables = new Map(refs.cables.map((cable) => [cable.id, cable]))
  const trays = new Map(refs.trays.map((tray) => [tray.id, tray]))
  // A cable fiber is cut once in a closure, so it may appear once in the plan, on either side.
  const fiberFirstRow = new Map<string, number>()
  const slotFirstRow = new Map<string, number>()
  const problems: PlanProblem[] = []

  rows.forEach((row, index) => {
    const add = (code: PlanProblemCode, field: PlanProblem['field'], message: string) =>
      problems.push({ index, row: index + 1, code, field, message })
    const sides = [
      { cableId: row.cableAId, fiber: row.fiberA, cableField: 'cableAId', fiberField: 'fiberA', side: 'A' },
      { cableId: row.cableBId, fiber: row.fiberB, cableField: 'cableBId', fiberField: 'fiberB', side: 'B' },
    ] as const

    for (const end of sides) {
      const cable = cables.get(end.cableId)
      if (!cable) {
        add('unknown_cable', end.cableField, `Side ${end.side} names a cable this project does not have.`)
      } else if (!Number.isInteger(end.fiber) || end.fiber < 1 || end.fiber > cable.fiberCount) {
        add(
          'fiber_out_of_range',
          end.fiberField,
          `Fiber ${end.fiber} is outside ${cable.label ? `cable ${cable.label}` : 'the cable'} (fibers 1–${cable.fiberCount}).`,
        )
      }
    }

    const sameFiber = row.cableAId === row.cableBId && row.fiberA === row.fiberB
    if (sameFiber)
      add('same_fiber_both_sides', 'fiberB', `Fiber ${row.fiberA} is on both sides of the splice.`)
    for (const end of sameFiber ? sides.slice(0, 1) : sides) {
      const key = fiberEndKey(end.cableId, end.fiber)
      const first = fiberFirstRow.get(key)
      if (first === undefined) {
        fiberFirstRow.set(key, index)
      } else {
        const label = cables.get(end.cableId)?.label
        add(
          'fiber_used_twice',
          end.fiberField,
          `Fiber ${end.fiber}${label ? ` of ${label}` : ''} is already used in row ${first + 1}.`,
        )
      }
    }

    const tray = trays.get(row.trayId)
    if (!tray) {
      add('unknown_tray', 'trayId', 'The row names a tray this closure does not have.')
    } else if (!Number.isInteger(row.slot) || row.slot < 1 || row.slot > tray.capacity) {
      add(
        'slot_out_of_capacity',
        'slot',
        `Slot ${row.slot} is outside tray ${tray.number} (slots 1–${tray.capacity}).`,
      )
    }
    const key = slotKey(row.trayId, row.slot)
    const first = slotFirstRow.get(key)
    if (first === undefined) slotFirstRow.set(key, index)
    else
      add('duplicate_slot', 'slot', `Slot ${row.slot} of this tray is already planned in row ${first + 1}.`)
  })
  return problems
}

/** One run of consecutive fibers to join 1:1: fibers fromA… of cable A to fromB… of cable B. */
export type PlanRange = { cableA: string; cableB: string; fromA: number; fromB: number; count: number }

/** Where generated rows go: trays are filled in number order from `startTray` (a tray number) and `startSlot`. */
export type SlotPlacement = { trays: readonly PlanTray[]; startTray?: number; startSlot?: number }

export type PlanGenerationErrorCode = 'bad_range' | 'unknown_tray' | 'bad_start_slot' | 'not_enough_slots'

/** Raised when a plan cannot be generated as asked. */
export class PlanGenerationError extends Error {
  override readonly name = 'PlanGenerationError'
  readonly code: PlanGenerationErrorCode

  constructor(code: PlanGenerationErrorCode, message: string) {
    super(message)
    this.code = code
  }
}

/** Generates plan rows for several ranges, filling tray slots in order; rows carry no ids (the caller assigns them). */
export function rangePlan(ranges: readonly PlanRange[], placement: SlotPlacement): PlanRowDraft[] {
  ranges.forEach((range, i) => {
    for (const [name, value] of [
      ['fromA', range.fromA],
      ['fromB', range.fromB],
      ['count', range.count],
    ] as const) {
      if (!Number.isInteger(value) || value < 1) {
        throw new PlanGenerationError(
          'bad_range',
          `Range ${i + 1}: ${name} must be a whole number from 1, not ${value}.`,
        )
      }
    }
  })
  const trays = [...placement.trays].sort((x, y) => x.number - y.number)
  if (trays.length === 0) throw new PlanGenerationError('unknown_tray', 'The closure has no trays to fill.')
  const startNumber = placement.startTray ?? (trays[0] as PlanTray).number
  let trayIndex = trays.findIndex((tray) => tray.number === startNumber)
  if (trayIndex < 0)
    throw new PlanGenerationError('unknown_tray', `There is no tray ${startNumber} to start from.`)
  let slot = placement.startSlot ?? 1
  const startTray = trays[trayIndex] as PlanTray
  if (!Number.isInteger(slot) || slot < 1 || slot > startTray.capacity) {
    throw new PlanGenerationError(
      'bad_start_slot',
      `Slot ${slot} is outside tray ${startTray.number} (slots 1–${startTray.capacity}).`,
    )
  }

  const needed = ranges.reduce((total, range) => total + range.count, 0)
  const free =
    startTray.capacity -
    slot +
    1 +
    trays.slice(trayIndex + 1).reduce((total, tray) => total + tray.capacity, 0)
  if (needed > free) {
    throw new PlanGenerationError(
      'not_enough_slots',
      `The plan needs ${needed} slots from tray ${startTray.number} slot ${slot}, but only ${free} are left.`,
    )
  }

  const rows: PlanRowDraft[] = []
  for (const range of ranges) {
    for (let k = 0; k < range.count; k += 1) {
      let tray = trays[trayIndex] as PlanTray
      if (slot > tray.capacity) {
        trayIndex += 1
        tray = trays[trayIndex] as PlanTray
        slot = 1
      }
      rows.push({
        trayId: tray.id,
        slot,
        cableAId: range.cableA,
        fiberA: range.fromA + k,
        cableBId: range.cableB,
        fiberB: range.fromB + k,
      })
      slot += 1
    }
  }
  return rows
}

/** Generates a straight 1:1 plan for one range of fibers, filling tray slots in order. */
export function straightPlan(options: PlanRange & SlotPlacement): PlanRowDraft[] {
  const { cableA, cableB, fromA, fromB, count, ...placement } = options
  return rangePlan([{ cableA, cableB, fromA, fromB, count }], placement)
}

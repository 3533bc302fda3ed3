import { createPinia, setActivePinia } from 'pinia'
import { effectScope, nextTick, shallowRef } from 'vue'
import { beforeEach, describe, expect, it, vi } from 'vitest'
import type { SpliceEntry } from '@/components/splice/spliceEntry'
import type { SlotSplice } from '@/components/tray/slotState'
import type { ClosureData } from '@/composables/useFieldData'
import { buildPlanRow, buildSplice, buildTray, ids, testId } from '../unit/shared/builders'

// The device write is the only part replaced: each test holds it open and decides when it commits or fails,
// to see what the tray shows in between.
const write = vi.hoisted(() => ({
  pending: [] as Array<{ resolve: (id: string) => void; reject: (error: Error) => void }>,
}))
vi.mock('@/composables/useSpliceLog', () => ({
  useSpliceLog: () => ({
    saveSplice: (entry: SpliceEntry, onPrepared?: (splice: SlotSplice) => void) => {
      onPrepared?.({
        id: testId(900 + entry.slot),
        trayId: entry.trayId,
        slot: entry.slot,
        cableAId: entry.cableAId,
        fiberA: entry.fiberA,
        cableBId: entry.cableBId,
        fiberB: entry.fiberB,
        lossDb: entry.lossDb,
        attempt: 1,
        acceptReason: entry.acceptReason,
      })
      return new Promise<string>((resolve, reject) => write.pending.push({ resolve, reject }))
    },
  }),
}))
const { useTrayWork } = await import('@/composables/useTrayWork')

const tray = buildTray({ capacity: 3 })
const planRows = [1, 2, 3].map((slot) =>
  buildPlanRow({ id: testId(100 + slot), slot, fiberA: slot, fiberB: slot }),
)

function setUp() {
  const data = shallowRef({
    closure: { id: ids.closure, state: 'in_progress' },
    trays: [tray],
    planRows,
    splices: [],
    cables: [],
    limits: { estimate: { standardMaxDb: 0.3, contractTargetDb: 0.1 }, attemptsBeforeAcceptWithFlag: 3 },
  } as unknown as ClosureData)
  const scope = effectScope()
  const work = scope.run(() =>
    useTrayWork(
      data,
      () => ids.closure,
      () => tray.id,
    ),
  )!
  return { data, work }
}

function entry(slot: number): SpliceEntry {
  return {
    trayId: tray.id,
    slot,
    cableAId: ids.cableA,
    fiberA: slot,
    cableBId: ids.cableB,
    fiberB: slot,
    method: 'single_fusion',
    lossDb: 0.02,
    notes: '',
    acceptReason: null,
    resplice: null,
    edit: null,
    photo: null,
    thenResplice: false,
  }
}

describe('useTrayWork: the slot answers the tap while the device writes', () => {
  beforeEach(() => {
    setActivePinia(createPinia())
    write.pending = []
  })

  it('when Save is tapped, then the slot shows the new splice at once, before the device commits', async () => {
    const { data, work } = setUp()
    work.open(1)
    const saving = work.save(entry(1))
    expect(work.splices.value.map((s) => s.slot)).toEqual([1])
    expect(work.openSlot.value).toBe(1) // the panel stays until the write is done

    write.pending[0]!.resolve(testId(901))
    await saving
    expect(work.openSlot.value).toBe(2) // then moves on
    expect(work.splices.value.map((s) => s.slot)).toEqual([1]) // still shown until the device read arrives

    const stored = buildSplice({ id: testId(901), slot: 1, fiberA: 1, fiberB: 1 })
    data.value = { ...data.value!, splices: [stored] } as unknown as ClosureData
    await nextTick()
    expect(work.splices.value).toEqual(data.value.splices) // the stored row replaces the shown one
  })

  it('when the device write fails, then the slot goes back to what the device holds and the panel stays', async () => {
    const { work } = setUp()
    work.open(2)
    const saving = work.save(entry(2))
    expect(work.splices.value.map((s) => s.slot)).toEqual([2])

    write.pending[0]!.reject(new Error('The device storage is full.'))
    await saving
    expect(work.splices.value).toEqual([])
    expect(work.openSlot.value).toBe(2) // the entry is still in the open panel, nothing lost
  })

  it('when a slot is saved twice quickly, then it shows one splice, the latest', () => {
    const { work } = setUp()
    work.open(3)
    void work.save({ ...entry(3), lossDb: 0.05 })
    void work.save({ ...entry(3), lossDb: 0.02 })
    expect(work.splices.value.map((s) => [s.slot, s.lossDb])).toEqual([[3, 0.02]])
  })
})

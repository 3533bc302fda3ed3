import { computed, ref, shallowRef, watch, type Ref } from 'vue'
import type { SlotSplice } from '@/components/tray/slotState'
import type { SpliceEntry } from '@/components/splice/spliceEntry'
import { progressOf, type ClosureData } from './useFieldData'
import { useSpliceLog } from './useSpliceLog'
import { useNoticeStore } from '@/stores/notice'
import type { CableRow } from '@/idb/schema'

function afterPaint(): Promise<void> {
  return new Promise((resolve) => requestAnimationFrame(() => setTimeout(resolve, 0)))
}

/** The splicer's walk through one tray: open a slot, save, move on to the next planned slot still to do. */
export function useTrayWork(
  data: Ref<ClosureData | null | undefined>,
  closureId: () => string,
  trayId: () => string,
) {
  const log = useSpliceLog(closureId)
  const notices = useNoticeStore()
  const tray = computed(() => data.value?.trays.find((row) => row.id === trayId()) ?? null)
  // Kept as the same object while no cable changed, so the slot list's rows are not all re-drawn after
  // every save (each device read brings new cable objects).
  const cables = computed<Record<string, CableRow>>((previous) => {
    const rows = data.value?.cables ?? []
    const unchanged =
      previous !== undefined &&
      Object.keys(previous).length === rows.length &&
      rows.every((cable) => previous[cable.id]?.serverSeq === cable.serverSeq)
    return unchanged ? previous : Object.fromEntries(rows.map((cable) => [cable.id, cable]))
  })
  const locked = computed(() => data.value?.closure.state === 'signed_off')
  const progress = computed(() => {
    const view = data.value
    if (!view) return { planned: 0, logged: 0, flagged: 0, offPlan: 0 }
    const mine = <T extends { trayId: string }>(rows: T[]) => rows.filter((row) => row.trayId === trayId())
    return progressOf(mine(view.planRows), mine(view.splices), view.limits)
  })
  /**
   * Attempts being written to the device, shown in the slot list at once (the tap is answered in the same
   * frame); each is dropped when the device read brings it back, or when its write fails.
   */
  const writing = shallowRef<SlotSplice[]>([])
  const splices = computed<readonly SlotSplice[]>(() => {
    const stored = data.value?.splices ?? []
    if (writing.value.length === 0) return stored
    const slots = new Set(writing.value.map((splice) => `${splice.trayId}:${splice.slot}`))
    return [...stored.filter((splice) => !slots.has(`${splice.trayId}:${splice.slot}`)), ...writing.value]
  })
  /** Written attempts whose slot waits for the next device read to show the stored row. */
  const committed = new Set<SlotSplice>()
  watch(data, () => {
    if (committed.size === 0) return
    writing.value = writing.value.filter((splice) => !committed.has(splice))
    committed.clear()
  })
  const openSlot = ref<number | null>(null)
  const activeSlot = ref<number | null>(null)
  /** The attempt just saved with "save and re-splice": the panel opens once the device shows it. */
  const respliceFrom = ref<string | null>(null)
  const saving = ref(false)

  const planned = computed(
    () => data.value?.planRows.find((row) => row.trayId === trayId() && row.slot === openSlot.value) ?? null,
  )
  const current = computed(
    () =>
      data.value?.splices.find((splice) => splice.trayId === trayId() && splice.slot === openSlot.value) ??
      null,
  )
  const panelReady = computed(
    () =>
      openSlot.value !== null && (respliceFrom.value === null || current.value?.id === respliceFrom.value),
  )
  const panelKey = computed(() => `${openSlot.value}:${respliceFrom.value ?? current.value?.id ?? 'new'}`)

  function open(slot: number) {
    respliceFrom.value = null
    openSlot.value = slot
    activeSlot.value = slot
  }
  function close() {
    openSlot.value = null
    respliceFrom.value = null
  }

  function nextToDo(after: number): number | null {
    const view = data.value
    if (!view || !tray.value) return null
    const done = new Set(splices.value.filter((s) => s.trayId === trayId()).map((s) => s.slot))
    const todo = view.planRows
      .filter((row) => row.trayId === trayId() && !done.has(row.slot) && row.slot !== after)
      .map((row) => row.slot)
      .sort((a, b) => a - b)
    return todo.find((slot) => slot > after) ?? todo[0] ?? null
  }

  async function save(entry: SpliceEntry) {
    saving.value = true
    let shown: SlotSplice | null = null
    try {
      const id = await log.saveSplice(entry, (splice) => {
        shown = splice
        const key = `${splice.trayId}:${splice.slot}`
        writing.value = [...writing.value.filter((w) => `${w.trayId}:${w.slot}` !== key), splice]
        // The frame answering the tap shows the slot before the device database's work competes with it.
        return afterPaint()
      })
      if (shown) committed.add(shown)
      if (entry.thenResplice) {
        respliceFrom.value = id
        return
      }
      const next = entry.edit ? null : nextToDo(entry.slot)
      if (next === null) {
        close()
        notices.show({
          kind: 'done',
          message: entry.edit ? 'Splice changed.' : 'Saved. No planned slot left to do in this tray.',
        })
      } else {
        // The next slot's panel is built after the saved slot has been painted, not in the same frame.
        await afterPaint()
        if (openSlot.value === entry.slot) open(next)
        notices.show({ kind: 'done', message: `Saved slot ${entry.slot}. Next: slot ${next}.` }, 1500)
      }
    } catch (error) {
      notices.show(
        { kind: 'problem', message: error instanceof Error ? error.message : 'The splice was not saved.' },
        6000,
      )
    } finally {
      saving.value = false
      // A failed write leaves the slot as the device holds it (the entry stays in the open panel).
      if (shown && !committed.has(shown)) writing.value = writing.value.filter((splice) => splice !== shown)
    }
  }

  return {
    tray,
    splices,
    locked,
    progress,
    cables,
    openSlot,
    activeSlot,
    respliceFrom,
    planned,
    current,
    panelReady,
    panelKey,
    saving,
    open,
    close,
    save,
  }
}

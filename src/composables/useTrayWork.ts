import { computed, ref, type Ref } from 'vue'
import type { SpliceEntry } from '@/components/splice/spliceEntry'
import { progressOf, type ClosureData } from './useFieldData'
import { useSpliceLog } from './useSpliceLog'
import { useNoticeStore } from '@/stores/notice'

/** The splicer's walk through one tray: open a slot, save, move on to the next planned slot still to do. */
export function useTrayWork(
  data: Ref<ClosureData | null | undefined>,
  closureId: () => string,
  trayId: () => string,
) {
  const log = useSpliceLog(closureId)
  const notices = useNoticeStore()
  const tray = computed(() => data.value?.trays.find((row) => row.id === trayId()) ?? null)
  const cables = computed(() =>
    Object.fromEntries((data.value?.cables ?? []).map((cable) => [cable.id, cable])),
  )
  const locked = computed(() => data.value?.closure.state === 'signed_off')
  const progress = computed(() => {
    const view = data.value
    if (!view) return { planned: 0, logged: 0, flagged: 0, offPlan: 0 }
    const mine = <T extends { trayId: string }>(rows: T[]) => rows.filter((row) => row.trayId === trayId())
    return progressOf(mine(view.planRows), mine(view.splices), view.limits)
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
    const done = new Set(view.splices.filter((s) => s.trayId === trayId()).map((s) => s.slot))
    const todo = view.planRows
      .filter((row) => row.trayId === trayId() && !done.has(row.slot) && row.slot !== after)
      .map((row) => row.slot)
      .sort((a, b) => a - b)
    return todo.find((slot) => slot > after) ?? todo[0] ?? null
  }

  async function save(entry: SpliceEntry) {
    saving.value = true
    try {
      const id = await log.saveSplice(entry)
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
        open(next)
        notices.show({ kind: 'done', message: `Saved slot ${entry.slot}. Next: slot ${next}.` }, 1500)
      }
    } catch (error) {
      notices.show(
        { kind: 'problem', message: error instanceof Error ? error.message : 'The splice was not saved.' },
        6000,
      )
    } finally {
      saving.value = false
    }
  }

  return {
    tray,
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

import { computed, type Ref } from 'vue'
import type { FiberCable } from '@/components/fiber/types'
import type { ClosureRecord } from './useReview'
import { usePhotoUrls } from './useReview'

/** Lookups a closure record's screens share: cables by id, tray numbers, notes and photos per record. */
export function useClosureRecordView(record: Ref<ClosureRecord | null | undefined>) {
  const cables = computed<Record<string, FiberCable>>(() =>
    Object.fromEntries((record.value?.cables ?? []).map((cable) => [cable.id, cable])),
  )
  const trayNumbers = computed(
    () => new Map((record.value?.trays ?? []).map((tray) => [tray.id, tray.number])),
  )
  const trayNumber = (trayId: string) => trayNumbers.value.get(trayId) ?? 0
  const closureNotes = computed(() => (record.value?.notes ?? []).filter((note) => note.entity === 'closure'))
  const spliceNotes = (spliceId: string, own: string) => [
    ...(own.trim() ? [own.trim()] : []),
    ...(record.value?.notes ?? [])
      .filter((note) => note.entity === 'splice' && note.entityId === spliceId)
      .map((note) => note.body),
  ]
  const urls = usePhotoUrls(() => (record.value?.photoLinks ?? []).map((link) => link.sha256))
  const photosOf = (entity: 'closure' | 'tray' | 'splice', entityId: string) =>
    (record.value?.photoLinks ?? [])
      .filter((link) => link.entity === entity && link.entityId === entityId)
      .map((link) => ({
        key: link.id,
        url: urls.value[link.sha256] ?? null,
        missing: (link as { missing?: boolean }).missing === true,
        caption:
          entity === 'closure'
            ? 'Closure'
            : entity === 'tray'
              ? `Tray ${trayNumber(link.entityId)}`
              : 'Splice',
      }))
  return { cables, trayNumber, closureNotes, spliceNotes, photosOf }
}

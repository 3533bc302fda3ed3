import { toRaw } from 'vue'
import { LocalStorage } from 'quasar'
import { v7 as uuidv7 } from 'uuid'
import type { SpliceEntry } from '@/components/splice/spliceEntry'
import type { SlotSplice } from '@/components/tray/slotState'
import { device } from '@/boot/sync'
import { deviceMeta } from '@/idb/db'
import { addNote, addPhotoLink, editSplice, logSplice, resplice } from '@/idb/writes'
import { useSessionStore } from '@/stores/session'
import { compressPhoto } from './usePhotoCompress'

const persistKey = 'ls.persistAsked'

// Asked once, after the first saved record: browsers grant it more readily once the site holds data.
function askToPersist() {
  if (LocalStorage.getItem<boolean>(persistKey)) return
  LocalStorage.set(persistKey, true)
  void navigator.storage?.persist?.().catch(() => false)
}

/** Saves splices, re-splices, edits, photos and notes to the device database; sync sends them later. */
export function useSpliceLog(closureId: () => string) {
  const session = useSessionStore()

  function db() {
    if (!device.value) throw new Error('No device database is open; sign in first.')
    return device.value.db
  }

  /**
   * Writes the splice (and its outbox entry) to the device. `onPrepared` receives the slot's new current
   * attempt before the first wait, so the tray can show it while the device database commits; the write
   * starts once the promise it may return has settled (the tray lets the frame showing it be painted first).
   */
  async function saveSplice(
    entry: SpliceEntry,
    onPrepared?: (splice: SlotSplice) => void | Promise<void>,
  ): Promise<string> {
    const current = db()
    const id = entry.edit ? entry.edit.id : uuidv7()
    const previous = entry.resplice ? toRaw(entry.resplice.previous) : null
    const ends = {
      cableAId: entry.cableAId,
      fiberA: entry.fiberA,
      cableBId: entry.cableBId,
      fiberB: entry.fiberB,
    }
    const attempt = entry.edit ? entry.edit.attempt : previous ? previous.attempt + 1 : 1
    await onPrepared?.({
      id,
      trayId: entry.trayId,
      slot: entry.slot,
      ...ends,
      lossDb: entry.lossDb,
      attempt,
      acceptReason: entry.acceptReason,
    })
    const photo = entry.photo ? await compressPhoto(entry.photo, entry.photo.name) : null
    if (entry.edit) {
      const next = {
        lossDb: entry.lossDb,
        method: entry.method,
        notes: entry.notes,
        acceptReason: entry.acceptReason,
        ...ends,
      }
      const before = entry.edit
      // Only changed fields travel: an untouched field must not overwrite a newer value on the server.
      const fields = Object.fromEntries(
        Object.entries(next).filter(([key, value]) => before[key as keyof typeof next] !== value),
      )
      if (Object.keys(fields).length > 0) await editSplice(current, id, fields)
    } else {
      const { clientId } = await deviceMeta(current)
      const args = {
        id,
        closureId: closureId(),
        trayId: entry.trayId,
        slot: entry.slot,
        ...ends,
        method: entry.method,
        lossDb: entry.lossDb,
        attempt,
        respliceReason: entry.resplice?.reason ?? null,
        respliceNote: entry.resplice?.note.trim() ? entry.resplice.note.trim() : null,
        supersedesId: previous?.id ?? null,
        acceptReason: entry.acceptReason,
        notes: entry.notes,
        splicedAt: new Date().toISOString(),
        splicerId: session.user?.id ?? '',
        clientId,
      }
      await (previous ? resplice(current, args) : logSplice(current, args))
    }
    if (photo) await addPhotoLink(current, { id: uuidv7(), entity: 'splice', entityId: id }, photo)
    device.value?.engine.notifyWrite()
    askToPersist()
    return id
  }

  async function saveClosureNote(body: string): Promise<void> {
    await addNote(db(), { id: uuidv7(), entity: 'closure', entityId: closureId(), body: body.trim() })
    device.value?.engine.notifyWrite()
    askToPersist()
  }

  return { saveSplice, saveClosureNote }
}

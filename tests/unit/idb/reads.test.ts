import { describe, expect, it } from 'vitest'
import { closureView, exportRejected, slotHistory, storageSummary } from '@/idb/reads'
import type { SpliceRow } from '@/idb/schema'
import { addPhotoLink, logSplice, resplice } from '@/idb/writes'
import { buildSplice, ids, testId } from '../shared/builders'
import { buildClosureRow, freshDb, seedClosure, spliceArgs } from './support'

function pulledSplice(n: number, closureId: string, trayId: string, isCurrent: boolean): SpliceRow {
  // Ids and slots both rise with n, so fake-indexeddb appends to its sorted indexes instead of shifting them.
  const slot = Math.min(144, Math.floor(n / 350) + 1)
  const splice = buildSplice({ id: testId(1_000_000 + n), closureId, trayId, slot, fiberA: (n % 3000) + 1 })
  const flags: string[] = []
  return {
    ...splice,
    isCurrent,
    flags,
    reviewState: null,
    createdAt: splice.splicedAt,
    serverSeq: 2,
    deleted: false,
  }
}

describe('reading the device database', () => {
  it('when a closure holds 50,000 splices, then its view opens through the indexes quickly', async () => {
    const db = await freshDb()
    await seedClosure(db)
    await db.closures.put(buildClosureRow({ id: ids.otherClosure, label: 'HH-13' }))
    await db.splices.bulkAdd(
      Array.from({ length: 50_000 }, (_, n) => pulledSplice(n, ids.closure, ids.tray1, n % 10 > 0)),
    )
    await db.splices.bulkAdd(
      Array.from({ length: 5000 }, (_, n) => pulledSplice(60_000 + n, ids.otherClosure, ids.tray2, true)),
    )

    const started = performance.now()
    const view = await closureView(db, ids.closure)
    const elapsed = performance.now() - started
    expect(view?.splices).toHaveLength(45_000)
    expect(view?.trays.map((t) => t.number)).toEqual([1, 2])
    // fake-indexeddb reads ~0.7 s here; a browser's IndexedDB is faster. The bound only catches a full scan
    // or per-row lookups, which cost several times more.
    expect(elapsed).toBeLessThan(3000)
  })

  it('when photos and records are stored, then the summary counts rows per table and photo bytes', async () => {
    const db = await freshDb()
    await seedClosure(db)
    const first = spliceArgs(1)
    await logSplice(db, first)
    await resplice(db, { ...spliceArgs(1), supersedesId: first.id, attempt: 2, respliceReason: 'bubble' })
    const photo = { bytes: new Uint8Array(1000).fill(7).buffer, type: 'image/jpeg', name: 'a.jpg' }
    const { sha256 } = await addPhotoLink(
      db,
      { id: testId(700), entity: 'closure', entityId: ids.closure },
      photo,
    )
    await db.photos.update(sha256, { uploaded: 1 })
    await addPhotoLink(
      db,
      { id: testId(701), entity: 'closure', entityId: ids.closure },
      {
        ...photo,
        bytes: new Uint8Array(500).buffer,
      },
    )

    const summary = await storageSummary(db)
    expect(summary.counts).toMatchObject({
      splices: 2,
      trays: 2,
      closures: 1,
      outbox: 4,
      photos: 2,
      photoLinks: 2,
    })
    expect(summary).toMatchObject({ photoBytes: 1500, unsentPhotoBytes: 500 })
    expect((await slotHistory(db, ids.tray1, first.slot)).map((s) => s.attempt)).toEqual([1, 2])
  })

  it('when something was rejected, then it exports as JSON with the device’s clientId', async () => {
    const db = await freshDb()
    await db.rejected.put({
      seq: 3,
      name: 'updateSplice',
      args: { id: testId(1), fields: { lossDb: 0.4 } },
      baseServerSeq: 2,
      clientTime: '2025-03-14T10:00:00.000Z',
      code: 'closure_locked',
      message: 'Signed off.',
      at: '2025-03-14T11:00:00.000Z',
    })
    const exported = JSON.parse(await exportRejected(db))
    expect(exported.userId).toBe(ids.splicer)
    expect(exported.rejected).toHaveLength(1)
    expect(exported.clientId).toMatch(/^[0-9a-f-]{36}$/)
  })
})

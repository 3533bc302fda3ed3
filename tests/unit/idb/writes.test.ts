import { describe, expect, it } from 'vitest'
import { deviceMeta } from '@/idb/db'
import { closureView } from '@/idb/reads'
import type { SpliceRow } from '@/idb/schema'
import {
  addNote,
  addPhotoLink,
  deleteSplice,
  editSplice,
  logSplice,
  MissingRecordError,
  MutationArgsError,
  reopenClosure,
  removePhotoLink,
  resplice,
  setClosurePosition,
  signOffClosure,
} from '@/idb/writes'
import { hashBytes } from '@/sync/hash'
import { ids, testId } from '../shared/builders'
import { freshDb, seedClosure, spliceArgs } from './support'

const uuidV7 = /^[0-9a-f]{8}-[0-9a-f]{4}-7[0-9a-f]{3}-[89ab][0-9a-f]{3}-[0-9a-f]{12}$/

describe('device database writes', () => {
  it('when a device database is created, then it gets a UUIDv7 clientId and starts at seq 1, cursor 0', async () => {
    const db = await freshDb()
    const meta = await deviceMeta(db)
    expect(meta.clientId).toMatch(uuidV7)
    expect(meta).toMatchObject({ nextSeq: 1, cursor: 0 })
    expect(db.name).toBe(`lightseam-${ids.splicer}`)
  })

  it('when a splice is logged, then its row, one pending outbox entry and the next seq commit together', async () => {
    const db = await freshDb()
    await seedClosure(db)
    const args = spliceArgs(1)
    const entry = await logSplice(db, args, { now: () => Date.parse('2025-03-14T14:30:00Z') })

    expect(entry).toMatchObject({
      seq: 1,
      name: 'createSplice',
      baseServerSeq: 1,
      state: 'pending',
      attempts: 0,
    })
    expect(entry.clientTime).toBe('2025-03-14T14:30:00.000Z')
    expect(entry.args).toMatchObject({ ...args, acceptReason: null, notes: '' })
    expect(await db.outbox.toArray()).toEqual([entry])
    expect(await db.splices.get(args.id)).toMatchObject({
      ...args,
      isCurrent: true,
      serverSeq: 0,
      deleted: false,
    })
    expect((await deviceMeta(db)).nextSeq).toBe(2)
  })

  it('when every kind of local write is made, then each adds exactly one outbox entry with the next seq', async () => {
    const db = await freshDb()
    await seedClosure(db)
    const first = spliceArgs(1)
    const photo = {
      bytes: new Uint8Array([0xff, 0xd8, 0xff, 1, 2, 3]).buffer,
      type: 'image/jpeg',
      name: 't.jpg',
    }
    const writes = [
      () => logSplice(db, first),
      () =>
        resplice(db, { ...spliceArgs(1), supersedesId: first.id, attempt: 2, respliceReason: 'high_loss' }),
      () => editSplice(db, first.id, { notes: 'cleaved twice' }),
      () => addPhotoLink(db, { id: testId(500), entity: 'splice', entityId: first.id }, photo),
      () => removePhotoLink(db, testId(500)),
      () =>
        addNote(db, {
          id: testId(501),
          entity: 'closure',
          entityId: ids.closure,
          body: 'Water in the vault',
        }),
      () => setClosurePosition(db, { closureId: ids.closure, lat: 44.97, lon: -93.26, routePositionM: 1200 }),
      () => signOffClosure(db, { closureId: ids.closure }),
      () => reopenClosure(db, { closureId: ids.closure, reason: 'Tray 2 photo missing' }),
      () => deleteSplice(db, first.id),
    ]
    for (const [i, write] of writes.entries()) {
      await write()
      const entries = await db.outbox.toArray()
      expect(entries.map((entry) => entry.seq)).toEqual(Array.from({ length: i + 1 }, (_, k) => k + 1))
    }
    const names = (await db.outbox.toArray()).map((entry) => entry.name)
    expect(names).toEqual([
      'createSplice',
      'resplice',
      'updateSplice',
      'addPhotoLink',
      'removePhotoLink',
      'addNote',
      'setClosurePosition',
      'signOffClosure',
      'reopenClosure',
      'deleteSplice',
    ])
    expect(await db.closures.get(ids.closure)).toMatchObject({ lat: 44.97, lon: -93.26, state: 'reopened' })
    expect(await db.photoLinks.get(testId(500))).toMatchObject({ deleted: true, addedBy: ids.splicer })
    expect(await db.notes.get(testId(501))).toMatchObject({
      body: 'Water in the vault',
      authorId: ids.splicer,
    })
  })

  it('when 200 writes run at once, then their seqs are exactly 1..200 and each has its row', async () => {
    const db = await freshDb()
    await seedClosure(db)
    const args = Array.from({ length: 200 }, (_, i) => spliceArgs(i + 1))
    const entries = await Promise.all(args.map((a) => logSplice(db, a)))

    const seqs = entries.map((entry) => entry.seq).sort((a, b) => a - b)
    expect(seqs).toEqual(Array.from({ length: 200 }, (_, i) => i + 1))
    expect(await db.outbox.count()).toBe(200)
    expect(await db.splices.count()).toBe(200)
    expect((await deviceMeta(db)).nextSeq).toBe(201)
    for (const entry of entries) expect(await db.splices.get(entry.args.id as string)).toBeDefined()
  })

  it('when args break the shared schema, then a clear error is thrown and nothing is written', async () => {
    const db = await freshDb()
    await seedClosure(db)
    const selfSplice = spliceArgs(1, { cableBId: ids.cableA, fiberA: 3, fiberB: 3 })

    await expect(logSplice(db, selfSplice)).rejects.toThrow(MutationArgsError)
    await expect(logSplice(db, selfSplice)).rejects.toThrow(/fiberB: A fiber cannot be spliced to itself/)
    await expect(editSplice(db, testId(9), {})).rejects.toThrow(/Give at least one field/)
    await expect(resplice(db, { ...spliceArgs(2), attempt: 2, respliceReason: 'bubble' })).rejects.toThrow(
      /names the attempt it replaces/,
    )
    await expect(
      addPhotoLink(
        db,
        { id: testId(5), entity: 'splice', entityId: testId(6) },
        {
          bytes: new Blob(['x']) as unknown as ArrayBuffer,
          type: 'image/jpeg',
          name: 'x.jpg',
        },
      ),
    ).rejects.toThrow(/ArrayBuffer/)

    expect(await db.outbox.count()).toBe(0)
    expect(await db.splices.count()).toBe(0)
    expect(await db.photos.count()).toBe(0)
    expect((await deviceMeta(db)).nextSeq).toBe(1)
  })

  it('when the record to edit is not on the device, then nothing is written', async () => {
    const db = await freshDb()
    await expect(editSplice(db, testId(9), { notes: 'x' })).rejects.toThrow(MissingRecordError)
    await expect(signOffClosure(db, { closureId: ids.closure })).rejects.toThrow(
      /closures .* is not on this device/,
    )
    expect(await db.outbox.count()).toBe(0)
    expect((await deviceMeta(db)).nextSeq).toBe(1)
  })

  it('when a splice is re-spliced, then the earlier attempt stops being current and the view shows the new one', async () => {
    const db = await freshDb()
    await seedClosure(db)
    const first = spliceArgs(1, { lossDb: 0.25 })
    await logSplice(db, first)
    const second = {
      ...spliceArgs(1),
      supersedesId: first.id,
      attempt: 2,
      respliceReason: 'high_loss' as const,
    }
    await resplice(db, second)

    expect(await db.splices.get(first.id)).toMatchObject({ isCurrent: false })
    const view = await closureView(db, ids.closure)
    expect(view?.splices.map((s) => s.id)).toEqual([second.id])

    // Removing the mistaken re-splice brings the first attempt back.
    await deleteSplice(db, second.id)
    expect((await closureView(db, ids.closure))?.splices.map((s) => s.id)).toEqual([first.id])
  })

  it('when a pulled record is edited, then baseServerSeq is that record’s serverSeq; a create uses the cursor', async () => {
    const db = await freshDb()
    await seedClosure(db)
    const pulled = {
      ...(spliceArgs(1) as SpliceRow),
      ...{ isCurrent: true, flags: [], reviewState: null, createdAt: '2025-03-14T10:00:00Z' },
      ...{ serverSeq: 7, deleted: false, acceptReason: null, notes: '' },
    }
    await db.splices.put(pulled)
    await db.meta.update('device', { cursor: 9 })

    expect((await editSplice(db, pulled.id, { lossDb: 0.04 })).baseServerSeq).toBe(7)
    expect((await logSplice(db, spliceArgs(2))).baseServerSeq).toBe(9)
  })

  it('when a photo is attached, then its bytes are stored as an ArrayBuffer under their sha256 in the same write', async () => {
    const db = await freshDb()
    await seedClosure(db)
    const bytes = new Uint8Array([0xff, 0xd8, 0xff, 0xe0, 9, 8, 7]).buffer
    const { entry, sha256 } = await addPhotoLink(
      db,
      { id: testId(600), entity: 'tray', entityId: ids.tray1 },
      { bytes, type: 'image/jpeg', name: 'tray1.jpg', width: 2048, height: 1536 },
    )

    expect(sha256).toBe(await hashBytes(bytes))
    expect(entry.args).toEqual({ id: testId(600), sha256, entity: 'tray', entityId: ids.tray1 })
    const photo = await db.photos.get(sha256)
    expect(photo?.bytes).toBeInstanceOf(ArrayBuffer)
    expect(new Uint8Array(photo!.bytes)).toEqual(new Uint8Array(bytes))
    expect(photo).toMatchObject({ type: 'image/jpeg', size: 7, name: 'tray1.jpg', uploaded: 0, width: 2048 })
  })
})

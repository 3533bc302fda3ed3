import { IDBFactory, IDBKeyRange } from 'fake-indexeddb'
import { describe, expect, it } from 'vitest'
import { type DeviceDbOptions, DeviceDb, deviceMeta } from '@/idb/db'
import type { OutboxEntry } from '@/idb/schema'
import { editSplice, logSplice } from '@/idb/writes'
import { ids } from '../shared/builders'
import { seedClosure, spliceArgs } from './support'

// What the next shipped version will look like: declared after version 1, never by editing it.
class DeviceDbV2 extends DeviceDb {
  constructor(userId: string, options: DeviceDbOptions) {
    super(userId, options)
    this.version(2)
      .stores({ splices: 'id, closureId, [closureId+trayId], [trayId+slot], supersedesId, splicerId' })
      .upgrade(async (tx) => {
        // Say version 2 renames the mutation argument `notes` to `remarks`: queued entries are migrated too.
        await tx
          .table<OutboxEntry, number>('outbox')
          .toCollection()
          .modify((entry) => {
            const fields = entry.args.fields as Record<string, unknown> | undefined
            if (entry.name === 'updateSplice' && fields && 'notes' in fields) {
              fields.remarks = fields.notes
              delete fields.notes
            }
          })
      })
  }
}

describe('device database versions', () => {
  it('when a version-1 database is opened by the next version, then data survives and the outbox is migrated', async () => {
    const options = { indexedDB: new IDBFactory(), IDBKeyRange }
    const v1 = new DeviceDb(ids.splicer, options)
    await seedClosure(v1)
    const args = spliceArgs(1)
    await logSplice(v1, args)
    await editSplice(v1, args.id, { notes: 'dust on cleaver' })
    const { clientId } = await deviceMeta(v1)
    expect(v1.verno).toBe(1)
    v1.close()

    const v2 = new DeviceDbV2(ids.splicer, options)
    await v2.open()
    expect(v2.verno).toBe(2)
    expect(await deviceMeta(v2)).toMatchObject({ clientId, nextSeq: 3, cursor: 1 })
    expect(await v2.splices.where('splicerId').equals(ids.splicer).count()).toBe(1)
    expect(await v2.splices.get(args.id)).toMatchObject({ notes: 'dust on cleaver' })
    const entries = await v2.outbox.toArray()
    expect(entries.map((entry) => entry.seq)).toEqual([1, 2])
    expect(entries[1]?.args).toEqual({ id: args.id, fields: { remarks: 'dust on cleaver' } })
    v2.close()
  })
})

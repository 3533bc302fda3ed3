import { IDBFactory, IDBKeyRange } from 'fake-indexeddb'
import { v7 as uuidv7 } from 'uuid'
import type { MutationArgs } from '#shared/schemas/sync'
import { type DeviceDb, openDeviceDb } from '@/idb/db'
import type { ClosureRow, TrayRow } from '@/idb/schema'
import { buildSplice, ids, testId } from '../shared/builders'

/** A device database on its own in-memory IndexedDB, as if on another phone. */
export function freshDb(userId: string = ids.splicer): Promise<DeviceDb> {
  return openDeviceDb(userId, { indexedDB: new IDBFactory(), IDBKeyRange })
}

export function buildClosureRow(overrides: Partial<ClosureRow> = {}): ClosureRow {
  return {
    id: ids.closure,
    projectId: ids.project,
    label: 'HH-12',
    kind: 'handhole',
    lat: null,
    lon: null,
    routePositionM: null,
    roadside: false,
    crewId: null,
    state: 'in_progress',
    signedOffBy: null,
    signedOffAt: null,
    serverSeq: 1,
    deleted: false,
    ...overrides,
  }
}

export function buildTrayRow(overrides: Partial<TrayRow> = {}): TrayRow {
  return {
    id: ids.tray1,
    closureId: ids.closure,
    number: 1,
    capacity: 12,
    serverSeq: 1,
    deleted: false,
    ...overrides,
  }
}

/** Puts a closure with two trays on the device as if pulled at server change 1. */
export async function seedClosure(db: DeviceDb): Promise<void> {
  await db.transaction('rw', db.closures, db.trays, db.meta, async () => {
    await db.closures.put(buildClosureRow())
    await db.trays.bulkPut([buildTrayRow(), buildTrayRow({ id: ids.tray2, number: 2 })])
    await db.meta.update('device', { cursor: 1 })
  })
}

/** createSplice args for fiber n of the test cables, with a fresh UUIDv7 id. */
export function spliceArgs(
  n: number,
  overrides: Partial<MutationArgs<'createSplice'>> = {},
): MutationArgs<'createSplice'> {
  const { id: _id, ...rest } = buildSplice({ slot: ((n - 1) % 12) + 1, fiberA: n, fiberB: n })
  return { ...rest, id: uuidv7(), clientId: testId(40), ...overrides }
}

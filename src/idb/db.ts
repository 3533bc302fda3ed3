import { Dexie, type DexieOptions, type Table } from 'dexie'
import { v7 as uuidv7 } from 'uuid'
import {
  declareVersions,
  type DeviceMeta,
  type OutboxEntry,
  type OverwrittenEntry,
  type PhotoRow,
  type RejectedEntry,
  type SyncedRows,
} from './schema'

export type DeviceDbOptions = Pick<DexieOptions, 'indexedDB' | 'IDBKeyRange'>

/** The IndexedDB name of a user's device database: one database per signed-in user. */
export function deviceDbName(userId: string): string {
  return `lightseam-${userId}`
}

/** The meta row a new device database starts with. */
export function newDeviceMeta(): DeviceMeta {
  return {
    key: 'device',
    clientId: uuidv7(),
    nextSeq: 1,
    cursor: 0,
    clockOffsetMs: null,
    lastPushAt: null,
    lastPullAt: null,
    lastError: null,
  }
}

/** One signed-in user's Dexie database: mirrored records, outbox, rejections, photos and device meta. */
export class DeviceDb extends Dexie {
  // `declare`, not `!`: class fields would overwrite the tables Dexie defines in its constructor.
  declare projects: Table<SyncedRows['projects'], string>
  declare cables: Table<SyncedRows['cables'], string>
  declare closures: Table<SyncedRows['closures'], string>
  declare closureAssignments: Table<SyncedRows['closureAssignments'], string>
  declare trays: Table<SyncedRows['trays'], string>
  declare planRows: Table<SyncedRows['planRows'], string>
  declare splices: Table<SyncedRows['splices'], string>
  declare photoLinks: Table<SyncedRows['photoLinks'], string>
  declare notes: Table<SyncedRows['notes'], string>
  declare outbox: Table<OutboxEntry, number>
  declare rejected: Table<RejectedEntry, number>
  declare overwritten: Table<OverwrittenEntry, number>
  declare photos: Table<PhotoRow, string>
  declare meta: Table<DeviceMeta, 'device'>

  readonly userId: string

  constructor(userId: string, options: DeviceDbOptions = {}) {
    super(deviceDbName(userId), options)
    this.userId = userId
    declareVersions(this)
    // Runs once, in the transaction that creates the database, so the clientId is born with it.
    this.on('populate', (tx) => {
      void tx.table('meta').add(newDeviceMeta())
    })
  }
}

/** Opens (creating on first use) the device database of `userId`. */
export async function openDeviceDb(userId: string, options: DeviceDbOptions = {}): Promise<DeviceDb> {
  const db = new DeviceDb(userId, options)
  await db.open()
  return db
}

/** The device meta row; every device database has one from the moment it is created. */
export async function deviceMeta(db: DeviceDb): Promise<DeviceMeta> {
  const meta = await db.meta.get('device')
  if (!meta) throw new Error(`Device database ${db.name} has no meta row.`)
  return meta
}

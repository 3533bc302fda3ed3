import { join } from 'node:path'
import type { Readable } from 'node:stream'
import type { Config } from '../config'
import { createLocalDiskStorage } from './localDisk'
import { createS3Storage } from './s3'

export { createLocalDiskStorage } from './localDisk'
export { createS3Storage, type S3StorageOptions } from './s3'

/**
 * Where photo bytes live, behind the routes and services: the embedded default is the local disk; an object
 * store only has to implement these five members. Keys are what the driver hands back from `put` and the
 * photos table keeps in storage_key.
 */
export interface PhotoStorage {
  /** A folder for uploads in flight, on the same file system as the store so `put` can rename atomically. */
  readonly tempDir: string
  /** Whether bytes are stored under `key`. */
  has(key: string): Promise<boolean>
  /** Moves a finished, verified temp file into the store under its hash; returns the storage key. */
  put(sha256: string, tempFile: string): Promise<string>
  /** The stored bytes as a stream (rejects when the key is not stored). */
  read(key: string): Promise<Readable>
  /** Deletes the bytes under `key`; removing what is not there is not an error. */
  remove(key: string): Promise<void>
  /** Rejects, saying why, when the store cannot take uploads now (folder not writable, bucket unreachable). */
  ready(): Promise<void>
}

/** The store the configuration names: the local disk unless LIGHTSEAM_STORAGE=s3. */
export function createPhotoStorage(config: Config): PhotoStorage {
  const store = config.photoStore
  if (store.driver === 'disk') return createLocalDiskStorage(config.photoDir)
  return createS3Storage({ ...store, tempDir: join(config.dataDir, 'upload-tmp') })
}

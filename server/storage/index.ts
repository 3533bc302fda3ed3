import { join } from 'node:path'
import type { Readable } from 'node:stream'
import type { Config } from '../config'
import { createLocalDiskStorage } from './localDisk'
import { createS3Client, createS3Storage } from './s3'

export { createLocalDiskStorage } from './localDisk'
export { createS3Client, createS3Storage, type S3StorageOptions } from './s3'

/**
 * One namespace of bytes named by their sha256 (photos, close-out reports), behind the routes and services:
 * the embedded default is the local disk; an object store only has to implement these six members. Keys are
 * what the driver hands back from `put` and the tables keep in storage_key.
 */
export interface BlobStore {
  /** A folder for files in flight, on the same file system as the store so `put` can rename atomically. */
  readonly tempDir: string
  /** Whether bytes are stored under `key`. */
  has(key: string): Promise<boolean>
  /** Moves a finished, verified temp file into the store under its hash; returns the storage key. */
  put(sha256: string, tempFile: string): Promise<string>
  /** The stored bytes as a stream (rejects when the key is not stored). */
  read(key: string): Promise<Readable>
  /** Deletes the bytes under `key`; removing what is not there is not an error. */
  remove(key: string): Promise<void>
  /** Rejects, saying why, when the store cannot take files now (folder not writable, bucket unreachable). */
  ready(): Promise<void>
}

/** Where the app keeps bytes: uploaded photos and stored close-out reports, each in its own namespace. */
export interface Storage {
  photos: BlobStore
  reports: BlobStore
}

/**
 * The stores the configuration names: the local disk (`config.photoDir`, `config.reportDir`) unless
 * LIGHTSEAM_STORAGE=s3, then `<prefix>photos/…` and `<prefix>reports/…` in one bucket, over one client.
 */
export function createStorage(config: Config): Storage {
  const store = config.storage
  if (store.driver === 'disk')
    return {
      photos: createLocalDiskStorage(config.photoDir),
      reports: createLocalDiskStorage(config.reportDir),
    }
  const client = createS3Client(store)
  const tempDir = join(config.dataDir, 'upload-tmp')
  return {
    photos: createS3Storage({ ...store, namespace: 'photos', tempDir: join(tempDir, 'photos') }, client),
    reports: createS3Storage({ ...store, namespace: 'reports', tempDir: join(tempDir, 'reports') }, client),
  }
}

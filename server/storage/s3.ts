import { createReadStream, mkdirSync, readdirSync, rmSync } from 'node:fs'
import { rm, stat } from 'node:fs/promises'
import { join, resolve } from 'node:path'
import type { Readable } from 'node:stream'
import {
  DeleteObjectCommand,
  GetObjectCommand,
  HeadBucketCommand,
  HeadObjectCommand,
  PutObjectCommand,
  S3Client,
  S3ServiceException,
} from '@aws-sdk/client-s3'
import type { BlobStore } from './index'

const hashPattern = /^[0-9a-f]{64}$/

/** Where the object store is and how to sign in to it (all from the environment, see server/config.ts). */
export interface S3StorageOptions {
  bucket: string
  region: string
  /** Another endpoint than AWS's (a compatible store, or the tests' fake one); path-style addressing then. */
  endpoint?: string
  accessKeyId?: string
  secretAccessKey?: string
  /** Prepended to every key, e.g. `lightseam/` when the bucket is shared. */
  prefix: string
  /** The folder after the prefix that keeps this store's objects apart: `photos` or `reports`. */
  namespace: 'photos' | 'reports'
  /** Local folder for files in flight (photos are verified there before they go to the store). */
  tempDir: string
}

function missing(error: unknown): boolean {
  if (!(error instanceof S3ServiceException)) return false
  return error.name === 'NotFound' || error.name === 'NoSuchKey' || error.$metadata.httpStatusCode === 404
}

/** A client for the configured endpoint and keys; the photo and report stores of one app share it. */
export function createS3Client(
  options: Pick<S3StorageOptions, 'region' | 'endpoint' | 'accessKeyId' | 'secretAccessKey'>,
): S3Client {
  return new S3Client({
    region: options.region,
    endpoint: options.endpoint,
    forcePathStyle: options.endpoint !== undefined,
    credentials:
      options.accessKeyId && options.secretAccessKey
        ? { accessKeyId: options.accessKeyId, secretAccessKey: options.secretAccessKey }
        : undefined,
    // Checksums only where S3 requires them: compatible stores do not all speak the newer trailers.
    requestChecksumCalculation: 'WHEN_REQUIRED',
    responseChecksumValidation: 'WHEN_REQUIRED',
  })
}

/**
 * Bytes as objects `<prefix><namespace>/ab/cd/<sha256>` in an S3 bucket. Uploads are checked in a local temp
 * file first (size, type, hash), exactly as with the disk driver, and only then sent, so the store never
 * holds bytes that failed a check; a PUT of one key is atomic in S3, so concurrent uploads of one hash are
 * harmless (they carry the same bytes).
 */
export function createS3Storage(options: S3StorageOptions, client?: S3Client): BlobStore {
  const s3 = client ?? createS3Client(options)
  const tempDir = resolve(options.tempDir)
  mkdirSync(tempDir, { recursive: true })
  // Only this process writes here, and it has just started: anything left is an upload a crash cut off.
  for (const name of readdirSync(tempDir)) rmSync(join(tempDir, name), { force: true })

  const Bucket = options.bucket
  const keyOf = (sha256: string) =>
    `${options.prefix}${options.namespace}/${sha256.slice(0, 2)}/${sha256.slice(2, 4)}/${sha256}`
  // Keys come from the tables; one that is not this store's shape is refused all the same.
  const checked = (key: string): string => {
    const sha256 = key.slice(key.lastIndexOf('/') + 1)
    if (!hashPattern.test(sha256) || key !== keyOf(sha256)) throw new Error(`bad storage key ${key}`)
    return key
  }

  return {
    tempDir,
    async has(key) {
      try {
        await s3.send(new HeadObjectCommand({ Bucket, Key: checked(key) }))
        return true
      } catch (error) {
        if (missing(error)) return false
        throw error
      }
    },
    async put(sha256, tempFile) {
      if (!hashPattern.test(sha256)) throw new Error('put: not a sha256')
      const Key = keyOf(sha256)
      const { size } = await stat(tempFile)
      await s3.send(
        new PutObjectCommand({
          Bucket,
          Key,
          Body: createReadStream(tempFile),
          ContentLength: size,
          ContentType: 'application/octet-stream',
        }),
      )
      await rm(tempFile, { force: true })
      return Key
    },
    async read(key) {
      const answer = await s3.send(new GetObjectCommand({ Bucket, Key: checked(key) }))
      if (!answer.Body) throw new Error(`no body for ${key}`)
      return answer.Body as Readable
    },
    async remove(key) {
      await s3.send(new DeleteObjectCommand({ Bucket, Key: checked(key) }))
    },
    async ready() {
      await s3.send(new HeadBucketCommand({ Bucket }))
    },
  }
}

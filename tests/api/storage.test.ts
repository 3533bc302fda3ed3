import { existsSync, readdirSync, writeFileSync } from 'node:fs'
import { join } from 'node:path'
import type { Readable } from 'node:stream'
import request from 'supertest'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { ConfigError, loadConfig } from '../../server/config'
import {
  createLocalDiskStorage,
  createS3Storage,
  createStorage,
  type BlobStore,
} from '../../server/storage/index'
import { useFakeS3 } from './support/fakeS3'
import { makeTestApp, type TestApp } from './support/app'
import { jpegBytes, sha256, upload } from './support/photos'
import { closureId, mutation, newClientId, pushOk } from './support/sync'

// Both stores behind one interface: the local disk (embedded default) and S3, here a fake S3 server on
// 127.0.0.1 started by the test. The same contract runs against each, then the photo routes run over S3.
// Stored close-out reports use the same drivers in their own namespace (tests/api/closeOutArchive.test.ts).

const bucket = 'lightseam-photos'
const { folder, endpoint: s3Endpoint } = useFakeS3(bucket, 'lightseam-storage-')

// s3rver takes any key pair it is given; its own defaults are used here.
const s3Options = (prefix = 'field/') => ({
  bucket,
  region: 'us-east-1',
  endpoint: s3Endpoint(),
  accessKeyId: 'S3RVER',
  secretAccessKey: 'S3RVER',
  prefix,
})

async function bytesOf(stream: Readable): Promise<Buffer> {
  const parts: Buffer[] = []
  for await (const part of stream) parts.push(Buffer.from(part as Uint8Array))
  return Buffer.concat(parts)
}

const drivers: Array<[string, () => BlobStore]> = [
  ['local disk', () => createLocalDiskStorage(folder())],
  ['S3', () => createS3Storage({ ...s3Options(), namespace: 'photos', tempDir: folder() })],
]

describe.each(drivers)('the %s store', (_name, make) => {
  it('when verified bytes are put, then they are there under the returned key, read back whole, and removable', async () => {
    const store = make()
    const bytes = jpegBytes(64, 48, 200_000)
    const hash = sha256(bytes)
    const temp = join(store.tempDir, 'upload.part')
    writeFileSync(temp, bytes)
    const key = await store.put(hash, temp)
    expect(key.endsWith(`${hash.slice(0, 2)}/${hash.slice(2, 4)}/${hash}`)).toBe(true)
    // The temp file is consumed by the put.
    expect(readdirSync(store.tempDir)).toEqual([])
    expect(await store.has(key)).toBe(true)
    expect((await bytesOf(await store.read(key))).equals(bytes)).toBe(true)
    await store.remove(key)
    expect(await store.has(key)).toBe(false)
    await expect(store.read(key)).rejects.toThrow()
    // Removing what is gone is not an error.
    await store.remove(key)
  })

  it('when a key is not of the store, then it is refused before any storage call', async () => {
    const store = make()
    await expect(store.has('../../etc/passwd')).rejects.toThrow(/bad storage key/)
    await expect(store.read('photos/zz/zz/not-a-hash')).rejects.toThrow()
    await expect(store.put('not-a-hash', join(store.tempDir, 'x'))).rejects.toThrow(/sha256/)
  })

  it('when the same hash is put twice, then the second put is harmless and the bytes stay right', async () => {
    const store = make()
    const bytes = jpegBytes(32, 32, 1000)
    const hash = sha256(bytes)
    const keys = await Promise.all(
      ['a.part', 'b.part'].map((name) => {
        const temp = join(store.tempDir, name)
        writeFileSync(temp, bytes)
        return store.put(hash, temp)
      }),
    )
    expect(keys[0]).toBe(keys[1])
    expect((await bytesOf(await store.read(keys[0]!))).equals(bytes)).toBe(true)
  })
})

describe('photos and reports in one configured store', () => {
  const secret = { jwtSecret: new TextEncoder().encode('x'.repeat(40)) }
  const put = async (store: BlobStore, bytes: Buffer) => {
    const temp = join(store.tempDir, 'file.part')
    writeFileSync(temp, bytes)
    return store.put(sha256(bytes), temp)
  }

  it('when the same bytes go to both on the local disk, then they are two files in two folders, photo paths as before', async () => {
    const dataDir = folder()
    const config = loadConfig({ NODE_ENV: 'test', LIGHTSEAM_DATA_DIR: dataDir }, secret)
    const storage = createStorage(config)
    const bytes = Buffer.from('%PDF-1.3 the same bytes in both namespaces')
    const hash = sha256(bytes)
    const shard = `${hash.slice(0, 2)}/${hash.slice(2, 4)}/${hash}`
    expect(await put(storage.photos, bytes)).toBe(shard)
    expect(await put(storage.reports, bytes)).toBe(shard)
    expect(existsSync(join(dataDir, 'photos', shard))).toBe(true)
    expect(existsSync(join(dataDir, 'reports', shard))).toBe(true)
    await storage.reports.remove(shard)
    expect(await storage.photos.has(shard)).toBe(true)
  })

  it('when the same bytes go to both over S3, then they are two objects under photos/ and reports/ and each store refuses the other’s keys', async () => {
    const config = loadConfig({ NODE_ENV: 'test', LIGHTSEAM_DATA_DIR: folder() }, secret)
    const storage = createStorage({ ...config, storage: { driver: 's3', ...s3Options('both/') } })
    const bytes = Buffer.from('%PDF-1.3 the same bytes in both buckets folders')
    const hash = sha256(bytes)
    const shard = `${hash.slice(0, 2)}/${hash.slice(2, 4)}/${hash}`
    expect(await put(storage.photos, bytes)).toBe(`both/photos/${shard}`)
    expect(await put(storage.reports, bytes)).toBe(`both/reports/${shard}`)
    expect((await bytesOf(await storage.reports.read(`both/reports/${shard}`))).equals(bytes)).toBe(true)
    await expect(storage.photos.has(`both/reports/${shard}`)).rejects.toThrow(/bad storage key/)
    await expect(storage.reports.read(`both/photos/${shard}`)).rejects.toThrow(/bad storage key/)
    await storage.reports.remove(`both/reports/${shard}`)
    expect(await storage.photos.has(`both/photos/${shard}`)).toBe(true)
    expect(await storage.reports.has(`both/reports/${shard}`)).toBe(false)
  })
})

describe('the photo routes over S3', () => {
  let t: TestApp
  beforeAll(() => {
    t = makeTestApp({ storage: { driver: 's3', ...s3Options('app/') } })
  })
  afterAll(() => t.close())

  it('when a photo is uploaded, then it lives in the bucket and HEAD and GET answer from there', async () => {
    const bytes = jpegBytes(800, 600, 50_000)
    const hash = sha256(bytes)
    expect((await upload(t, 'splicer', bytes)).status).toBe(201)
    const auth = await t.tokenFor('splicer')
    // Reading needs a record showing the photo: a link to the demo closure, pushed as a device would.
    await pushOk(t, 'splicer', newClientId(), [
      mutation(1, 'addPhotoLink', {
        id: newClientId(),
        sha256: hash,
        entity: 'closure',
        entityId: closureId(t, 'VLT-01'),
      }),
    ])
    expect((await request(t.app).head(`/api/photos/${hash}`).set('Authorization', auth)).status).toBe(200)
    const got = await request(t.app)
      .get(`/api/photos/${hash}`)
      .set('Authorization', auth)
      .buffer(true)
      .parse((res, done) => {
        const parts: Buffer[] = []
        res.on('data', (part: Buffer) => parts.push(part))
        res.on('end', () => done(null, Buffer.concat(parts)))
      })
    expect(got.status).toBe(200)
    expect((got.body as Buffer).equals(bytes)).toBe(true)
    // The object is in the bucket under the configured prefix, straight from a second client.
    const direct = createS3Storage({ ...s3Options('app/'), namespace: 'photos', tempDir: folder() })
    expect(await direct.has(`app/photos/${hash.slice(0, 2)}/${hash.slice(2, 4)}/${hash}`)).toBe(true)
    // Again: idempotent, nothing new stored.
    expect([200, 201]).toContain((await upload(t, 'splicer', bytes)).status)
    expect(readdirSync(t.ctx.storage.photos.tempDir)).toEqual([])
  })

  it('when a photo fails a check, then nothing reaches the bucket', async () => {
    const bytes = jpegBytes(100, 100, 2000)
    const wrongHash = sha256(Buffer.from('other bytes'))
    const refused = await upload(t, 'splicer', bytes, 'image/jpeg', wrongHash)
    expect(refused.status).toBe(422)
    const direct = createS3Storage({ ...s3Options('app/'), namespace: 'photos', tempDir: folder() })
    const key = (hash: string) => `app/photos/${hash.slice(0, 2)}/${hash.slice(2, 4)}/${hash}`
    expect(await direct.has(key(wrongHash))).toBe(false)
    expect(await direct.has(key(sha256(bytes)))).toBe(false)
  })
})

describe('photo store configuration', () => {
  const base = { NODE_ENV: 'test' as const, LIGHTSEAM_DATA_DIR: folder() }
  const secret = { jwtSecret: new TextEncoder().encode('x'.repeat(40)) }

  it('when nothing is set, then photos and reports go to the local disk, each in its folder of the data folder', () => {
    const config = loadConfig(base, secret)
    expect(config.storage).toEqual({ driver: 'disk' })
    expect(config.photoDir).toBe(join(base.LIGHTSEAM_DATA_DIR, 'photos'))
    expect(config.reportDir).toBe(join(base.LIGHTSEAM_DATA_DIR, 'reports'))
    const elsewhere = folder()
    expect(loadConfig({ ...base, LIGHTSEAM_REPORT_DIR: elsewhere }, secret).reportDir).toBe(elsewhere)
  })

  it('when S3 is chosen without a bucket or with half a key pair, then the server refuses to start, naming it', () => {
    expect(() => loadConfig({ ...base, LIGHTSEAM_STORAGE: 's3' }, secret)).toThrow(ConfigError)
    expect(() => loadConfig({ ...base, LIGHTSEAM_STORAGE: 's3' }, secret)).toThrow(/LIGHTSEAM_S3_BUCKET/)
    expect(() =>
      loadConfig(
        { ...base, LIGHTSEAM_STORAGE: 's3', LIGHTSEAM_S3_BUCKET: bucket, LIGHTSEAM_S3_ACCESS_KEY_ID: 'a' },
        secret,
      ),
    ).toThrow(/LIGHTSEAM_S3_SECRET_ACCESS_KEY/)
    expect(() => loadConfig({ ...base, LIGHTSEAM_STORAGE: 'ftp' }, secret)).toThrow(/LIGHTSEAM_STORAGE/)
    expect(() =>
      loadConfig(
        { ...base, LIGHTSEAM_STORAGE: 's3', LIGHTSEAM_S3_BUCKET: bucket, LIGHTSEAM_S3_ENDPOINT: 'nope' },
        secret,
      ),
    ).toThrow(/LIGHTSEAM_S3_ENDPOINT/)
  })

  it('when S3 is configured, then the settings reach the driver as given', () => {
    const config = loadConfig(
      {
        ...base,
        LIGHTSEAM_STORAGE: 's3',
        LIGHTSEAM_S3_BUCKET: bucket,
        LIGHTSEAM_S3_ENDPOINT: s3Endpoint(),
        LIGHTSEAM_S3_PREFIX: 'corvell/',
      },
      secret,
    )
    expect(config.storage).toMatchObject({
      driver: 's3',
      bucket,
      endpoint: s3Endpoint(),
      prefix: 'corvell/',
    })
  })
})

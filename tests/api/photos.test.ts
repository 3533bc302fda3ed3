import http from 'node:http'
import type { AddressInfo } from 'node:net'
import request from 'supertest'
import { v7 as uuidv7 } from 'uuid'
import { afterEach, describe, expect, it, vi } from 'vitest'
import { imageDimensions, sniffImageType } from '../../server/services/photos'
import { makeTestApp, tableCounts, type DemoWho, type TestApp } from './support/app'
import {
  iconPng,
  jpegBytes,
  photoRows,
  sha256,
  storedFiles,
  tempFiles,
  upload,
  webpBytes,
} from './support/photos'
import { closureId, mutation, newClientId, pull, pushOk } from './support/sync'

let t: TestApp
afterEach(() => t?.close())

/** Links a photo to a closure through push, as the device does once the photo is taken. */
async function linkTo(hash: string, label: string, who: DemoWho = 'office') {
  const client = newClientId()
  const link = { id: uuidv7(), sha256: hash, entity: 'closure', entityId: closureId(t, label) }
  await pushOk(t, who, client, [mutation(1, 'addPhotoLink', link)])
  return link
}

/** Proves a refused upload stored nothing: no row, no file, no temp leftovers, no other table touched. */
function expectNothingStored(counts: Record<string, number>) {
  expect(tableCounts(t.database)).toEqual(counts)
  expect(storedFiles(t)).toEqual([])
  expect(tempFiles(t)).toEqual([])
}

describe('photo bytes', () => {
  it('when the formats are sniffed, then JPEG, PNG and WebP are told apart and sized; anything else is not an image', () => {
    expect(sniffImageType(iconPng)).toBe('image/png')
    expect(imageDimensions('image/png', iconPng)).toEqual({ width: 192, height: 192 })
    expect(sniffImageType(jpegBytes())).toBe('image/jpeg')
    expect(imageDimensions('image/jpeg', jpegBytes(4032, 3024))).toEqual({ width: 4032, height: 3024 })
    expect(sniffImageType(webpBytes())).toBe('image/webp')
    expect(imageDimensions('image/webp', webpBytes(1280, 960))).toEqual({ width: 1280, height: 960 })
    expect(sniffImageType(Buffer.from('GIF89a\x01\x00\x01\x00'))).toBeNull()
    expect(sniffImageType(Buffer.from('<html><script>alert(1)</script>'))).toBeNull()
    expect(imageDimensions('image/jpeg', Buffer.from([0xff, 0xd8, 0xff, 0xe0, 0x00]))).toBeNull()
  })
})

describe('PUT, HEAD and GET /api/photos/:sha256', () => {
  it('when a splicer uploads a photo, then it is stored once under its hash and served to readers of a linked record', async () => {
    t = makeTestApp()
    const hash = sha256(iconPng)
    const res = await upload(t, 'splicer', iconPng, 'image/png')
    expect(res.status).toBe(201)
    expect(res.body).toEqual({
      sha256: hash,
      mime: 'image/png',
      size: iconPng.length,
      width: 192,
      height: 192,
    })
    expect(storedFiles(t)).toEqual([`${hash.slice(0, 2)}/${hash.slice(2, 4)}/${hash}`])
    expect(tempFiles(t)).toEqual([])

    const head = async (who: 'splicer' | 'splicer2' | 'inspector') =>
      (
        await request(t.app)
          .head(`/api/photos/${hash}`)
          .set('Authorization', await t.tokenFor(who))
      ).status
    const get = async (who: 'splicer' | 'splicer2' | 'inspector' | 'foreman') =>
      request(t.app)
        .get(`/api/photos/${hash}`)
        .set('Authorization', await t.tokenFor(who))
        .buffer(true)
        .parse((r, done) => {
          const chunks: Buffer[] = []
          r.on('data', (c: Buffer) => chunks.push(c))
          r.on('end', () => done(null, Buffer.concat(chunks)))
        })
    // Not linked yet: the uploader may learn it is there (so the phone stops resending), nobody may read it.
    expect(await head('splicer')).toBe(200)
    expect(await head('splicer2')).toBe(404)
    expect((await get('splicer')).status).toBe(404)

    await linkTo(hash, 'VLT-01', 'splicer')
    const served = await get('foreman')
    expect(served.status).toBe(200)
    expect(Buffer.compare(served.body as Buffer, iconPng)).toBe(0)
    expect(served.headers).toMatchObject({
      'content-type': 'image/png',
      'x-content-type-options': 'nosniff',
      'cache-control': 'private, max-age=31536000, immutable',
    })
    expect((await get('splicer2')).status).toBe(404)
    expect((await get('inspector')).status).toBe(404)
    await linkTo(hash, 'BLD-04')
    expect((await get('inspector')).status).toBe(200)
    expect(await head('inspector')).toBe(200)
  })

  it('when someone links a stored photo they could not read, then the link is refused and the photo stays hidden', async () => {
    t = makeTestApp()
    const hash = sha256(iconPng)
    expect((await upload(t, 'splicer2', iconPng, 'image/png')).status).toBe(201)
    await linkTo(hash, 'AER-05', 'splicer2') // crew 2's own closure
    const read = async () =>
      (
        await request(t.app)
          .get(`/api/photos/${hash}`)
          .set('Authorization', await t.tokenFor('splicer'))
      ).status
    expect(await read()).toBe(404)
    // Crew 1's splicer knows the hash and tries to link it to a closure of their own to read it.
    const link = { id: uuidv7(), sha256: hash, entity: 'closure', entityId: closureId(t, 'VLT-01') }
    const answer = await pushOk(t, 'splicer', newClientId(), [mutation(1, 'addPhotoLink', link)])
    expect(answer.results[0]).toMatchObject({ status: 'rejected', code: 'not_found' })
    expect(await read()).toBe(404)
  })

  it('when the same photo is uploaded again or ten times at once, then there is one file and one row', async () => {
    t = makeTestApp()
    const again = jpegBytes()
    expect((await upload(t, 'splicer', again)).status).toBe(201)
    expect((await upload(t, 'foreman', again)).status).toBe(200)

    const bytes = webpBytes()
    await t.tokenFor('splicer')
    const statuses = await Promise.all(
      Array.from({ length: 10 }, () => upload(t, 'splicer', bytes, 'image/webp')),
    )
    expect(statuses.map((r) => r.status).sort()).toEqual([200, 200, 200, 200, 200, 200, 200, 200, 200, 201])
    expect(photoRows(t)).toBe(2)
    expect(storedFiles(t)).toHaveLength(2)
    expect(tempFiles(t)).toEqual([])
    expect(statuses.every((r) => r.body.width === 640 && r.body.height === 480)).toBe(true)
  })

  it('when a link was pushed before its photo arrived, then pull shows it missing, and again once it is there', async () => {
    t = makeTestApp()
    const bytes = jpegBytes()
    const hash = sha256(bytes)
    const link = await linkTo(hash, 'VLT-01', 'splicer')
    const first = await pull(t, 'splicer', { cursor: 1 })
    expect(first.body.changes).toContainEqual(
      expect.objectContaining({ id: link.id, row: expect.objectContaining({ missing: true }) }),
    )
    expect((await upload(t, 'splicer', bytes)).status).toBe(201)
    const second = await pull(t, 'splicer', { cursor: first.body.cursor })
    expect(second.body.changes).toEqual([
      expect.objectContaining({
        table: 'photoLinks',
        id: link.id,
        row: expect.objectContaining({ missing: false }),
      }),
    ])
  })
})

describe('refused uploads store nothing', () => {
  it('when the body is over the limit, declared or streamed, then 413 and nothing is kept', async () => {
    t = makeTestApp({ photoMaxBytes: 64 * 1024 })
    const big = jpegBytes(800, 600, 80 * 1024)
    await t.tokenFor('splicer')
    const counts = tableCounts(t.database)
    const declared = await upload(t, 'splicer', big)
    expect(declared.status).toBe(413)
    expect(declared.body.error.code).toBe('too_large')
    expectNothingStored(counts)

    // Chunked, so only counting the bytes can catch it.
    const server = t.app.listen(0, '127.0.0.1')
    await new Promise((resolve) => server.once('listening', resolve))
    try {
      const status = await new Promise<number>((resolve, reject) => {
        const req = http.request({
          host: '127.0.0.1',
          port: (server.address() as AddressInfo).port,
          method: 'PUT',
          path: `/api/photos/${sha256(big)}`,
          headers: { Authorization: '', 'Content-Type': 'image/jpeg' },
        })
        void t.tokenFor('splicer').then((auth) => {
          req.setHeader('Authorization', auth)
          req.on('response', (res) => {
            res.resume()
            resolve(res.statusCode ?? 0)
          })
          req.on('error', () => undefined)
          for (let offset = 0; offset < big.length; offset += 8192)
            req.write(big.subarray(offset, offset + 8192))
          req.end()
        }, reject)
      })
      expect(status).toBe(413)
    } finally {
      server.close()
    }
    await vi.waitFor(() => expect(tempFiles(t)).toEqual([]))
    expectNothingStored(counts)
  })

  it('when the type is wrong, mislabelled or a polyglot, then 415 and nothing is kept', async () => {
    t = makeTestApp()
    await t.tokenFor('splicer')
    const counts = tableCounts(t.database)
    const gif = Buffer.concat([Buffer.from('GIF89a'), Buffer.alloc(64)])
    const html = Buffer.from('<!doctype html><script>fetch("/api/auth/me")</script>')
    const cases: [Buffer, string][] = [
      [gif, 'image/gif'],
      [gif, 'image/jpeg'],
      [html, 'image/jpeg'],
      [html, 'text/html'],
      [jpegBytes(), 'image/png'],
      [iconPng, 'image/webp'],
      [Buffer.from([0xff, 0xd8]), 'image/jpeg'],
    ]
    for (const [bytes, type] of cases) {
      const res = await upload(t, 'splicer', bytes, type)
      expect({ type, status: res.status }).toEqual({ type, status: 415 })
      expect(res.body.error.code).toBe('unsupported_media_type')
    }
    expectNothingStored(counts)
  })

  it('when the bytes do not hash to the address, then 422 and nothing is kept', async () => {
    t = makeTestApp()
    await t.tokenFor('splicer')
    const counts = tableCounts(t.database)
    const res = await upload(t, 'splicer', jpegBytes(), 'image/jpeg', sha256(jpegBytes()))
    expect(res.status).toBe(422)
    expect(res.body.error.code).toBe('hash_mismatch')
    expectNothingStored(counts)
  })

  it('when the hash in the address is malformed or tries to leave the store, then 400 or 404 before any byte is read', async () => {
    t = makeTestApp()
    const auth = await t.tokenFor('splicer')
    const counts = tableCounts(t.database)
    const bytes = jpegBytes()
    const hash = sha256(bytes)
    const paths = [
      hash.toUpperCase(),
      hash.slice(0, 63),
      `${hash}0`,
      `${hash.slice(0, 60)}zzzz`,
      '..%2F..%2Fjwt-secret',
      '%2e%2e',
      '%2e%2e%2f%2e%2e%2flightseam.sqlite',
      `..%2F${hash}`,
    ]
    for (const path of paths) {
      for (const method of ['put', 'get', 'head'] as const) {
        const req = request(t.app)[method](`/api/photos/${path}`).set('Authorization', auth)
        const res = method === 'put' ? await req.set('Content-Type', 'image/jpeg').send(bytes) : await req
        expect({ path, method, status: res.status }).toEqual({ path, method, status: 400 })
      }
    }
    for (const path of [`../${hash}`, `${hash.slice(0, 2)}/${hash}`, `../../jwt-secret`]) {
      const res = await request(t.app)
        .put(`/api/photos/${path}`)
        .set('Authorization', auth)
        .set('Content-Type', 'image/jpeg')
        .send(bytes)
      expect([400, 404]).toContain(res.status)
    }
    expectNothingStored(counts)
  })

  it('when the inspector or nobody uploads, then 403 or 401', async () => {
    t = makeTestApp()
    const bytes = jpegBytes()
    expect((await upload(t, 'inspector', bytes)).status).toBe(403)
    const anonymous = await request(t.app)
      .put(`/api/photos/${sha256(bytes)}`)
      .set('Content-Type', 'image/jpeg')
      .send(bytes)
    expect(anonymous.status).toBe(401)
    expect(photoRows(t)).toBe(0)
  })

  it('when the client drops the connection mid-body, then the temp file is removed and nothing is recorded', async () => {
    t = makeTestApp()
    const auth = await t.tokenFor('splicer')
    const counts = tableCounts(t.database)
    const bytes = jpegBytes(2048, 1536, 512 * 1024)
    const server = t.app.listen(0, '127.0.0.1')
    await new Promise((resolve) => server.once('listening', resolve))
    try {
      const req = http.request({
        host: '127.0.0.1',
        port: (server.address() as AddressInfo).port,
        method: 'PUT',
        path: `/api/photos/${sha256(bytes)}`,
        headers: { Authorization: auth, 'Content-Type': 'image/jpeg', 'Content-Length': bytes.length },
      })
      req.on('error', () => undefined)
      req.write(bytes.subarray(0, 128 * 1024))
      // Wait until the server is writing the upload to its temp file, then cut the connection.
      await vi.waitFor(() => expect(tempFiles(t)).toHaveLength(1))
      req.destroy()
      await vi.waitFor(() => expect(tempFiles(t)).toEqual([]))
    } finally {
      server.close()
    }
    expectNothingStored(counts)
  })
})

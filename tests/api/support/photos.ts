import { createHash, randomBytes } from 'node:crypto'
import { readdirSync, readFileSync } from 'node:fs'
import { join, relative } from 'node:path'
import request from 'supertest'
import type { DemoWho, TestApp } from './app'

// Image bytes for upload tests: a real PNG from the app's icons, and JPEG and WebP files whose headers are
// genuine (magic bytes, SOF0 / VP8L dimensions) around random filler, so every call hashes differently.

/** The app's 192 px icon: a real PNG. */
export const iconPng = readFileSync(new URL('../../../public/icons/icon-192.png', import.meta.url))

/** A JPEG stream: SOI, JFIF APP0, a comment making it unique, SOF0 with the dimensions, filler, EOI. */
export function jpegBytes(width = 2048, height = 1536, filler = 2048): Buffer {
  const comment = randomBytes(16)
  const app0 = Buffer.from([0xff, 0xe0, 0x00, 0x10, 0x4a, 0x46, 0x49, 0x46, 0x00, 1, 1, 0, 0, 1, 0, 1, 0, 0])
  const com = Buffer.concat([Buffer.from([0xff, 0xfe, 0x00, comment.length + 2]), comment])
  const sof = Buffer.from([
    0xff,
    0xc0,
    0x00,
    0x11,
    8,
    height >> 8,
    height & 0xff,
    width >> 8,
    width & 0xff,
    3,
  ])
  const components = Buffer.from([1, 0x22, 0, 2, 0x11, 1, 3, 0x11, 1])
  return Buffer.concat([
    Buffer.from([0xff, 0xd8]),
    app0,
    com,
    sof,
    components,
    randomBytes(filler),
    Buffer.from([0xff, 0xd9]),
  ])
}

/** A lossless WebP (VP8L) header with the given dimensions, then filler. */
export function webpBytes(width = 640, height = 480, filler = 1024): Buffer {
  const bits = ((width - 1) & 0x3fff) | (((height - 1) & 0x3fff) << 14)
  const payload = Buffer.concat([
    Buffer.from([0x2f]),
    Buffer.from(new Uint32Array([bits]).buffer),
    randomBytes(filler),
  ])
  const chunk = Buffer.concat([
    Buffer.from('VP8L'),
    Buffer.from(new Uint32Array([payload.length]).buffer),
    payload,
  ])
  return Buffer.concat([
    Buffer.from('RIFF'),
    Buffer.from(new Uint32Array([chunk.length + 4]).buffer),
    Buffer.from('WEBP'),
    chunk,
  ])
}

export const sha256 = (bytes: Buffer) => createHash('sha256').update(bytes).digest('hex')

/** PUT /api/photos/:hash with raw bytes as a demo user. */
export async function upload(
  t: TestApp,
  who: DemoWho,
  bytes: Buffer,
  type = 'image/jpeg',
  hash = sha256(bytes),
) {
  return request(t.app)
    .put(`/api/photos/${hash}`)
    .set('Authorization', await t.tokenFor(who))
    .set('Content-Type', type)
    .send(bytes)
}

function walk(dir: string): string[] {
  return readdirSync(dir, { withFileTypes: true }).flatMap((entry) =>
    entry.isDirectory() ? walk(join(dir, entry.name)) : [join(dir, entry.name)],
  )
}

/** Files in the photo store, outside its temp folder, relative to the store. */
export function storedFiles(t: TestApp): string[] {
  const tempDir = t.ctx.storage.photos.tempDir
  return walk(t.config.photoDir)
    .filter((file) => !file.startsWith(tempDir))
    .map((file) => relative(t.config.photoDir, file))
}

/** Files left in the store's temp folder. */
export const tempFiles = (t: TestApp) => readdirSync(t.ctx.storage.photos.tempDir)

export const photoRows = (t: TestApp) =>
  (t.database.sqlite.prepare('SELECT count(*) AS n FROM photos').get() as { n: number }).n

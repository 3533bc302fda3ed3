import { createHash, randomUUID } from 'node:crypto'
import { type FileHandle, open, rm } from 'node:fs/promises'
import { join } from 'node:path'
import type { Readable } from 'node:stream'
import { writeTransaction } from '#db/client'
import { sha256Schema } from '#shared/schemas/sync'
import type { AppContext } from '../context'
import { AppError, notFound } from '../errors'
import type { Actor } from '../middleware/auth'
import { recordEvent } from '../repositories/audit'
import {
  closuresShowingPhoto,
  findPhoto,
  insertPhoto,
  type PhotoRow,
  restampPhotoLinks,
} from '../repositories/photos'
import { canSeeClosure } from './access'

export type { PhotoRow }

/** The media types a photo may be uploaded as; the bytes must say the same. */
export const photoMediaTypes = ['image/jpeg', 'image/png', 'image/webp'] as const
export type PhotoMediaType = (typeof photoMediaTypes)[number]

// Enough of the file for the magic bytes and, usually, the dimensions (a JPEG's SOF follows its EXIF block).
const headBytes = 256 * 1024
const sniffBytes = 12

/** Names the image format from its first bytes (JPEG, PNG or WebP), or null for anything else. */
export function sniffImageType(head: Uint8Array): PhotoMediaType | null {
  const b = Buffer.from(head.buffer, head.byteOffset, head.byteLength)
  if (b.length >= 3 && b[0] === 0xff && b[1] === 0xd8 && b[2] === 0xff) return 'image/jpeg'
  if (b.length >= 8 && b.subarray(0, 8).equals(Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a])))
    return 'image/png'
  if (b.length >= 12 && b.toString('latin1', 0, 4) === 'RIFF' && b.toString('latin1', 8, 12) === 'WEBP')
    return 'image/webp'
  return null
}

/** Reads width and height from a JPEG SOF, PNG IHDR or WebP VP8/VP8L/VP8X header; null when not in `head`. */
export function imageDimensions(
  type: PhotoMediaType,
  head: Buffer,
): { width: number; height: number } | null {
  try {
    if (type === 'image/png') {
      if (head.toString('latin1', 12, 16) !== 'IHDR') return null
      return { width: head.readUInt32BE(16), height: head.readUInt32BE(20) }
    }
    if (type === 'image/webp') {
      const chunk = head.toString('latin1', 12, 16)
      if (chunk === 'VP8 ' && head[23] === 0x9d && head[24] === 0x01 && head[25] === 0x2a)
        return { width: head.readUInt16LE(26) & 0x3fff, height: head.readUInt16LE(28) & 0x3fff }
      if (chunk === 'VP8L' && head[20] === 0x2f) {
        const bits = head.readUInt32LE(21)
        return { width: (bits & 0x3fff) + 1, height: ((bits >>> 14) & 0x3fff) + 1 }
      }
      if (chunk === 'VP8X') return { width: 1 + head.readUIntLE(24, 3), height: 1 + head.readUIntLE(27, 3) }
      return null
    }
    // JPEG: walk the marker segments to the first start-of-frame (SOF0–SOF15 but DHT, JPG and DAC).
    let i = 2
    while (i + 9 <= head.length) {
      if (head[i] !== 0xff) return null
      const marker = head[i + 1]!
      if (marker === 0xff) {
        i += 1
        continue
      }
      if (marker === 0x01 || (marker >= 0xd0 && marker <= 0xd8)) {
        i += 2
        continue
      }
      if (marker >= 0xc0 && marker <= 0xcf && marker !== 0xc4 && marker !== 0xc8 && marker !== 0xcc)
        return { height: head.readUInt16BE(i + 5), width: head.readUInt16BE(i + 7) }
      if (marker === 0xda || marker === 0xd9) return null
      i += 2 + head.readUInt16BE(i + 2)
    }
    return null
  } catch {
    // A header cut short by the head buffer: dimensions unknown.
    return null
  }
}

/** A malformed hash names no photo: 400 before any byte of a body is read. */
export function assertPhotoHash(sha256: unknown): asserts sha256 is string {
  if (!sha256Schema.safeParse(sha256).success) {
    throw new AppError('invalid_hash', 'A photo is named by the lowercase hex sha256 of its bytes.', 400)
  }
}

function tooLarge(max: number): AppError {
  // Connection: close ends the exchange instead of reading (and discarding) the rest of the body.
  return new AppError('too_large', `A photo may be at most ${max} bytes.`, 413, undefined, {
    Connection: 'close',
  })
}

function notAnImage(declared: string): AppError {
  return new AppError(
    'unsupported_media_type',
    `The bytes are not a ${declared.replace('image/', '').toUpperCase()} image; send JPEG, PNG or WebP as what it is.`,
    415,
    undefined,
    { Connection: 'close' },
  )
}

/** An upload as the route hands it over: the raw body stream and what the request declared about it. */
export interface PhotoUpload {
  body: Readable
  mediaType: string
  /** Content-Length, or null for a chunked body. */
  length: number | null
}

/** The outcome of an upload: whether this request stored the photo first, and what is stored. */
export interface StoredPhoto {
  created: boolean
  photo: Pick<PhotoRow, 'sha256' | 'mime' | 'size' | 'width' | 'height'>
}

/**
 * Streams an upload to a temp file, counting bytes and hashing as it goes, checks the size limit, the magic
 * bytes against the declared type and the hash against the address, then moves it into storage and records
 * it once. Whatever fails, the temp file is removed.
 */
export async function storePhoto(
  ctx: AppContext,
  actor: Actor,
  sha256: unknown,
  upload: PhotoUpload,
): Promise<StoredPhoto> {
  assertPhotoHash(sha256)
  const max = ctx.config.photoMaxBytes
  if (upload.length !== null && upload.length > max) throw tooLarge(max)
  const declared = upload.mediaType.split(';')[0]!.trim().toLowerCase()
  if (!(photoMediaTypes as readonly string[]).includes(declared)) throw notAnImage(declared)

  const temp = join(ctx.storage.photos.tempDir, `${randomUUID()}.part`)
  let file: FileHandle | null = null
  let kept = false
  const hash = createHash('sha256')
  const held: Buffer[] = []
  let head = Buffer.alloc(0)
  let size = 0
  try {
    // destroyOnReturn false: stopping early must not tear the socket down before the refusal is sent.
    for await (const piece of upload.body.iterator({ destroyOnReturn: false })) {
      const chunk = piece as Buffer
      size += chunk.length
      if (size > max) throw tooLarge(max)
      hash.update(chunk)
      if (head.length < headBytes) head = Buffer.concat([head, chunk.subarray(0, headBytes - head.length)])
      if (file === null) {
        held.push(chunk)
        if (head.length < sniffBytes) continue
        // Checked before anything reaches the disk: a polyglot or a mislabelled file is refused here.
        if (sniffImageType(head) !== declared) throw notAnImage(declared)
        file = await open(temp, 'wx', 0o600)
        for (const early of held.splice(0)) await file.write(early)
        continue
      }
      await file.write(chunk)
    }
    if (file === null || sniffImageType(head) !== declared) throw notAnImage(declared)
    if (upload.length !== null && size !== upload.length) throw aborted()
    await file.close()
    file = null
    if (hash.digest('hex') !== sha256) {
      throw new AppError('hash_mismatch', 'The bytes do not hash to the sha256 in the address.', 422)
    }
    const dimensions = imageDimensions(declared as PhotoMediaType, head)
    const known = findPhoto(ctx.database.db, sha256)
    if (known && (await ctx.storage.photos.has(known.storageKey)))
      return { created: false, photo: publicPhoto(known) }
    const storageKey = await ctx.storage.photos.put(sha256, temp)
    kept = true
    const row: PhotoRow = {
      sha256,
      mime: declared,
      size,
      width: dimensions?.width ?? null,
      height: dimensions?.height ?? null,
      uploadedBy: actor.id,
      uploadedAt: new Date().toISOString(),
      storageKey,
    }
    const created = writeTransaction(ctx.database.sqlite, (serverSeq) => {
      if (!insertPhoto(ctx.database.db, row)) return false
      restampPhotoLinks(ctx.database.db, sha256, serverSeq)
      recordEvent(
        ctx.database.db,
        { userId: actor.id, entity: 'photo', entityId: sha256, at: row.uploadedAt },
        'created',
        { mime: row.mime, size: row.size, width: row.width, height: row.height },
      )
      return true
    })
    return { created, photo: publicPhoto(created ? row : (findPhoto(ctx.database.db, sha256) ?? row)) }
  } catch (error) {
    if (error instanceof AppError) throw error
    // The client went away mid-body (ECONNRESET 'aborted'): nobody is left to answer, nothing is kept.
    if (upload.body.destroyed || (error as { code?: string }).code === 'ECONNRESET') throw aborted()
    throw error
  } finally {
    if (file !== null) await file.close().catch(() => undefined)
    if (!kept) await rm(temp, { force: true })
  }
}

const publicPhoto = ({ sha256, mime, size, width, height }: PhotoRow): StoredPhoto['photo'] => ({
  sha256,
  mime,
  size,
  width,
  height,
})

function aborted(): AppError {
  return new AppError('upload_aborted', 'The upload ended before all of its bytes arrived.', 400, undefined, {
    Connection: 'close',
  })
}

/** Whether the actor may read a record linked to the photo (photo_links → splice/tray/closure → closure scope). */
function mayRead(ctx: AppContext, actor: Actor, sha256: string): boolean {
  return closuresShowingPhoto(ctx.database.db, sha256).some((closure) => canSeeClosure(actor, closure))
}

/** The photo for HEAD: stored, and readable by the actor or uploaded by them (so a device can skip re-sending it). */
export async function photoHead(ctx: AppContext, actor: Actor, sha256: unknown): Promise<PhotoRow> {
  assertPhotoHash(sha256)
  const photo = findPhoto(ctx.database.db, sha256)
  if (!photo || (photo.uploadedBy !== actor.id && !mayRead(ctx, actor, sha256))) throw notFound('The photo')
  if (!(await ctx.storage.photos.has(photo.storageKey))) throw notFound('The photo')
  return photo
}

/** The photo and its bytes, only for users who may read a record linked to it. */
export async function readPhoto(
  ctx: AppContext,
  actor: Actor,
  sha256: unknown,
): Promise<{ photo: PhotoRow; bytes: Readable }> {
  assertPhotoHash(sha256)
  const photo = findPhoto(ctx.database.db, sha256)
  if (!photo || !mayRead(ctx, actor, sha256)) throw notFound('The photo')
  try {
    return { photo, bytes: await ctx.storage.photos.read(photo.storageKey) }
  } catch {
    throw notFound('The photo')
  }
}

import type { DeviceDb } from '@/idb/db'
import { markPhotoUploaded, notePhotoError } from '@/idb/replication'
import { type Transport, TransportError } from './transport'

/**
 * Uploads every photo the server lacks (HEAD first, then PUT of the raw bytes); returns how many are now
 * on the server and the last temporary failure, if any.
 */
export async function uploadPhotos(
  db: DeviceDb,
  transport: Transport,
): Promise<{ uploaded: number; temporaryError: string | null }> {
  const waiting = await db.photos.where('uploaded').equals(0).primaryKeys()
  let uploaded = 0
  let temporaryError: string | null = null
  for (const sha256 of waiting) {
    // One photo's bytes in memory at a time.
    const photo = await db.photos.get(sha256)
    if (!photo || photo.uploaded === 1) continue
    const path = `/api/photos/${sha256}`
    try {
      const head = await transport.request({ method: 'HEAD', path })
      let status = head.status
      if (status !== 200) {
        status = (
          await transport.request({ method: 'PUT', path, bytes: photo.bytes, contentType: photo.type })
        ).status
      }
      if (status === 200 || status === 201) {
        await markPhotoUploaded(db, sha256)
        uploaded += 1
        continue
      }
      const message = `Photo ${sha256.slice(0, 12)} was not stored (HTTP ${status}).`
      await notePhotoError(db, sha256, message)
      // 413/415/422 will not change by retrying soon; they stay queued and visible on the photo row.
      if (status >= 500 || status === 429) temporaryError = message
    } catch (error) {
      if (error instanceof TransportError && error.kind !== 'signIn')
        await notePhotoError(db, sha256, error.message)
      throw error
    }
  }
  return { uploaded, temporaryError }
}

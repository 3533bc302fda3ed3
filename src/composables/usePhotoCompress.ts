/** The longest side a stored photo keeps: enough to read a tray label, small enough to sync on one bar. */
export const photoLongestSide = 2048

export interface CompressedPhoto {
  bytes: ArrayBuffer
  type: 'image/jpeg'
  name: string
  width: number
  height: number
}

/** Re-encodes a camera picture on the device as JPEG, its longest side at most 2048 px. */
export async function compressPhoto(file: Blob, name = 'photo.jpg'): Promise<CompressedPhoto> {
  const bitmap = await createImageBitmap(file)
  const scale = Math.min(1, photoLongestSide / Math.max(bitmap.width, bitmap.height))
  const width = Math.max(1, Math.round(bitmap.width * scale))
  const height = Math.max(1, Math.round(bitmap.height * scale))
  const canvas = document.createElement('canvas')
  canvas.width = width
  canvas.height = height
  const context = canvas.getContext('2d')
  if (!context) throw new Error('This browser cannot draw the photo to compress it.')
  context.drawImage(bitmap, 0, 0, width, height)
  bitmap.close()
  const blob = await new Promise<Blob>((resolve, reject) =>
    canvas.toBlob(
      (out) => (out ? resolve(out) : reject(new Error('The photo could not be encoded.'))),
      'image/jpeg',
      0.85,
    ),
  )
  const base = name.replace(/\.[^.]*$/, '') || 'photo'
  return { bytes: await blob.arrayBuffer(), type: 'image/jpeg', name: `${base}.jpg`, width, height }
}

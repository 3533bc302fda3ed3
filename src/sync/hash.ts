/** The lowercase hex sha256 of `bytes`, as photos are keyed on device and server. */
export async function hashBytes(bytes: ArrayBuffer | ArrayBufferView<ArrayBuffer>): Promise<string> {
  const digest = await globalThis.crypto.subtle.digest('SHA-256', bytes)
  return Array.from(new Uint8Array(digest), (b) => b.toString(16).padStart(2, '0')).join('')
}

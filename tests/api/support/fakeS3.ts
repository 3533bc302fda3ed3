import { mkdtempSync, rmSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import S3rver from 's3rver'
import { afterAll, beforeAll } from 'vitest'

/**
 * A fake S3 server (s3rver) on 127.0.0.1 with one bucket, started before the file's tests and stopped
 * after them, and temporary folders (`folder()`) removed with it. `endpoint()` is known once it runs.
 */
export function useFakeS3(bucket: string, folderPrefix: string) {
  let server: S3rver | undefined
  let endpoint = ''
  const folders: string[] = []
  const folder = () => {
    const dir = mkdtempSync(join(tmpdir(), folderPrefix))
    folders.push(dir)
    return dir
  }
  beforeAll(async () => {
    server = new S3rver({
      address: '127.0.0.1',
      port: 0,
      silent: true,
      directory: folder(),
      configureBuckets: [{ name: bucket, configs: [] }],
    })
    const address = await server.run()
    endpoint = `http://127.0.0.1:${address.port}`
  })
  afterAll(async () => {
    await server?.close()
    for (const dir of folders) rmSync(dir, { recursive: true, force: true })
  })
  return { folder, endpoint: () => endpoint }
}

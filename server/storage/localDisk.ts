import { createReadStream, mkdirSync, readdirSync, rmSync } from 'node:fs'
import { constants } from 'node:fs'
import { access, mkdir, open, rename, rm } from 'node:fs/promises'
import { join, resolve, sep } from 'node:path'
import type { Readable } from 'node:stream'
import type { BlobStore } from './index'

const hashPattern = /^[0-9a-f]{64}$/

/** Files under `root/ab/cd/<sha256>`: two levels of 256 folders keep any one folder small. */
export function createLocalDiskStorage(root: string): BlobStore {
  const base = resolve(root)
  const tempDir = join(base, '.tmp')
  mkdirSync(tempDir, { recursive: true })
  // Only this process writes here, and it has just started: anything left is an upload a crash cut off.
  for (const name of readdirSync(tempDir)) rmSync(join(tempDir, name), { force: true })

  // Keys come from the tables, but a key that strays outside the store is refused all the same.
  const pathOf = (key: string): string => {
    const path = resolve(base, key)
    if (!path.startsWith(base + sep) || path.startsWith(tempDir + sep))
      throw new Error(`bad storage key ${key}`)
    return path
  }

  return {
    tempDir,
    async has(key) {
      const path = pathOf(key)
      try {
        await access(path)
        return true
      } catch {
        return false
      }
    },
    async put(sha256, tempFile) {
      if (!hashPattern.test(sha256)) throw new Error('put: not a sha256')
      const key = `${sha256.slice(0, 2)}/${sha256.slice(2, 4)}/${sha256}`
      const dir = join(base, sha256.slice(0, 2), sha256.slice(2, 4))
      await mkdir(dir, { recursive: true })
      // The bytes reach the disk before the name does, and the name before the caller records the row.
      const file = await open(tempFile, 'r')
      try {
        await file.sync()
      } finally {
        await file.close()
      }
      // rename() replaces atomically: concurrent uploads of one hash carry the same bytes, so any winner is right.
      await rename(tempFile, pathOf(key))
      const folder = await open(dir, 'r')
      try {
        await folder.sync()
      } finally {
        await folder.close()
      }
      return key
    },
    async read(key) {
      const path = pathOf(key)
      await access(path)
      return createReadStream(path) as Readable
    },
    async remove(key) {
      await rm(pathOf(key), { force: true })
    },
    async ready() {
      await access(tempDir, constants.W_OK)
      await access(base, constants.W_OK)
    },
  }
}

import { spawnSync } from 'node:child_process'
import { existsSync, readdirSync, statSync } from 'node:fs'
import { join } from 'node:path'

function newestMtime(path: string): number {
  const stat = statSync(path)
  if (!stat.isDirectory()) return stat.mtimeMs
  let newest = stat.mtimeMs
  for (const entry of readdirSync(path)) newest = Math.max(newest, newestMtime(join(path, entry)))
  return newest
}

/** Builds the PWA when dist/ is missing or older than any client source, so `npm start` always serves current code. */
export function buildIfNeeded(root: string, staticDir: string): void {
  const index = join(staticDir, 'index.html')
  const inputs = ['src', 'shared', 'public', 'index.html', 'vite.config.ts', 'quasar.config.ts']
    .map((p) => join(root, p))
    .filter((p) => existsSync(p))
  if (existsSync(index) && statSync(index).mtimeMs >= Math.max(...inputs.map(newestMtime))) return
  console.warn('Building the app (dist/ is missing or older than the sources)…')
  const result = spawnSync('npx', ['vite', 'build', '--logLevel', 'warn'], { cwd: root, stdio: 'inherit' })
  if (result.status !== 0) throw new Error('The app build failed; see the output above.')
}

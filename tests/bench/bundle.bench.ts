// The JavaScript the field screens load, gzipped, from a fresh production build (DESIGN.md §5: ≤ 180 KB;
// office screens must load on demand and not count here). Run with `npx tsx tests/bench/bundle.bench.ts`.
import { execFileSync } from 'node:child_process'
import { readFileSync } from 'node:fs'
import { join } from 'node:path'
import { pathToFileURL } from 'node:url'
import { gzipSync } from 'node:zlib'
import type { BenchFigure } from './board.bench'

interface ManifestChunk {
  file: string
  src?: string
  isEntry?: boolean
  imports?: string[]
  dynamicImports?: string[]
}

/** The pages a splicer uses; every other page is an on-demand screen of another role. */
export const fieldPages = ['SignInPage', 'ClosuresPage', 'ClosurePage', 'TrayPage', 'NotFoundPage']

/** Sums the gzipped JS reachable from the entry through static imports and the field pages' lazy chunks. */
export function fieldBundle(distDir: string): { files: string[]; gzipBytes: number; allGzipBytes: number } {
  const manifest = JSON.parse(readFileSync(join(distDir, '.vite', 'manifest.json'), 'utf8')) as Record<
    string,
    ManifestChunk
  >
  const seen = new Set<string>()
  const visit = (key: string) => {
    if (seen.has(key)) return
    seen.add(key)
    const chunk = manifest[key]
    if (!chunk) return
    for (const next of chunk.imports ?? []) visit(next)
    for (const next of chunk.dynamicImports ?? []) {
      const target = manifest[next]
      const isPage = target?.src?.startsWith('src/pages/')
      if (!isPage || fieldPages.some((page) => target?.src?.endsWith(`/${page}.vue`))) visit(next)
    }
  }
  for (const [key, chunk] of Object.entries(manifest)) if (chunk.isEntry) visit(key)
  const gz = (file: string) => gzipSync(readFileSync(join(distDir, file))).length
  const files = [...seen]
    .map((key) => manifest[key]?.file)
    .filter((f): f is string => !!f && f.endsWith('.js'))
  const all = Object.values(manifest)
    .map((c) => c.file)
    .filter((f) => f.endsWith('.js'))
  return {
    files,
    gzipBytes: files.reduce((sum, f) => sum + gz(f), 0),
    allGzipBytes: [...new Set(all)].reduce((sum, f) => sum + gz(f), 0),
  }
}

/** Builds the app and reports the field screens' gzipped JavaScript. */
export function main(options: { log?: (line: string) => void } = {}): BenchFigure[] {
  const log = options.log ?? (() => undefined)
  execFileSync('npx', ['vite', 'build', '--logLevel', 'warn'], { stdio: 'inherit' })
  const result = fieldBundle('dist')
  log(`${result.files.length} chunks reach the field screens`)
  return [
    {
      figure: 'JavaScript of the field screens, gzipped',
      target: 180,
      measured: result.gzipBytes / 1024,
      unit: 'KB',
    },
    {
      figure: 'JavaScript of every screen, gzipped',
      target: null,
      measured: result.allGzipBytes / 1024,
      unit: 'KB',
    },
  ]
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  for (const f of main({ log: (line) => process.stdout.write(`${line}\n`) })) {
    process.stdout.write(
      `${f.figure}: ${f.measured.toFixed(1)} ${f.unit}${f.target ? ` (target ≤ ${f.target} ${f.unit})` : ''}\n`,
    )
  }
}

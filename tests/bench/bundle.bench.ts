// The JavaScript the field screens load, gzipped, from a fresh production build (DESIGN.md §5: ≤ 180 KB;
// office screens must load on demand and not count here). Run with `npx tsx tests/bench/bundle.bench.ts`.
import { execFileSync } from 'node:child_process'
import { readFileSync } from 'node:fs'
import { join } from 'node:path'
import { pathToFileURL } from 'node:url'
import { gzipSync } from 'node:zlib'
import type { BenchFigure } from './board.bench'
import { splicerSession } from './support/splicer'

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

/**
 * The JavaScript a splicer's Chromium loads while using every field screen: sign-in, the closures list, a
 * closure, a tray, the splice panel, the sync details and the settings menu. Files are the page's own
 * script loads (resource timing), the service worker's background precache not included.
 */
async function loadedByTheSplicer(distDir: string): Promise<{ files: string[]; gzipBytes: number }> {
  const session = await splicerSession()
  try {
    const { page } = session
    await page.locator('[data-testid=closure-card]').first().click()
    await page.locator('[data-tray="1"]').click()
    await page.locator('li[data-slot]').first().waitFor()
    await page.locator('li[data-slot] button').first().click()
    await page.locator('.ls-panel').waitFor()
    await page.getByRole('button', { name: 'Close' }).click()
    await page.locator('[data-testid=sync-indicator]').click()
    await page.locator('[data-testid=sync-details]').waitFor()
    await page.keyboard.press('Escape')
    await page.locator('[data-testid=settings]').click()
    await page.locator('[data-testid=high-contrast]').waitFor()
    const urls = await page.evaluate(() =>
      performance
        .getEntriesByType('resource')
        .map((entry) => new URL(entry.name).pathname)
        .filter((path) => path.endsWith('.js')),
    )
    const files = [...new Set(urls)].map((path) => path.replace(/^\//, ''))
    return {
      files,
      gzipBytes: files.reduce((sum, f) => sum + gzipSync(readFileSync(join(distDir, f))).length, 0),
    }
  } finally {
    await session.close()
  }
}

/** Builds the app and reports the field screens' gzipped JavaScript. */
export async function main(options: { log?: (line: string) => void } = {}): Promise<BenchFigure[]> {
  const log = options.log ?? (() => undefined)
  execFileSync('npx', ['vite', 'build', '--logLevel', 'warn'], { stdio: 'inherit' })
  const result = fieldBundle('dist')
  log(`${result.files.length} chunks reach the field screens through the build manifest`)
  const loaded = await loadedByTheSplicer('dist')
  log(`${loaded.files.length} JavaScript files loaded by the splicer's browser`)
  return [
    {
      figure: 'JavaScript of the field screens, gzipped (loaded by the splicer)',
      target: 180,
      measured: loaded.gzipBytes / 1024,
      unit: 'KB',
    },
    {
      figure: 'JavaScript reachable from the field screens, gzipped (manifest)',
      target: null,
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
  for (const f of await main({ log: (line) => process.stdout.write(`${line}\n`) })) {
    process.stdout.write(
      `${f.figure}: ${f.measured.toFixed(1)} ${f.unit}${f.target ? ` (target ≤ ${f.target} ${f.unit})` : ''}\n`,
    )
  }
}

// `npm run bench`: runs every tests/bench/*.bench.ts in turn, prints one summary table and writes it to
// bench-results.txt (git-ignored). Benchmarks report figures; they never pass or fail anything.
import { readdirSync, writeFileSync } from 'node:fs'
import { fileURLToPath, pathToFileURL } from 'node:url'
import { join } from 'node:path'

interface Figure {
  figure: string
  target: number | null
  measured: number
  unit: string
  baseline?: number
}

interface BenchModule {
  main: (options: { log?: (line: string) => void }) => Figure[] | Promise<Figure[]>
}

const here = fileURLToPath(new URL('.', import.meta.url))
const only = process.argv.slice(2)
const files = readdirSync(here)
  .filter((f) => f.endsWith('.bench.ts'))
  .filter((f) => only.length === 0 || only.some((name) => f.includes(name)))
  .sort()

const rows: Array<Figure & { bench: string }> = []
for (const file of files) {
  const bench = file.replace(/\.bench\.ts$/, '')
  process.stdout.write(`\n== ${bench}\n`)
  const started = performance.now()
  const mod = (await import(pathToFileURL(join(here, file)).href)) as BenchModule
  const figures = await mod.main({ log: (line) => process.stdout.write(`   ${line}\n`) })
  rows.push(...figures.map((f) => ({ ...f, bench })))
  process.stdout.write(`   (${((performance.now() - started) / 1000).toFixed(0)} s)\n`)
}

const num = (v: number | undefined) =>
  v === undefined ? '—' : Math.abs(v) < 10 ? v.toFixed(3) : v.toFixed(1)
const table = [
  ['bench', 'figure', 'target', 'measured', 'baseline', 'ratio'],
  ...rows.map((r) => [
    r.bench,
    r.figure,
    r.target === null ? '—' : `${r.target} ${r.unit}`,
    `${num(r.measured)} ${r.unit}`,
    r.baseline === undefined ? '—' : `${num(r.baseline)} ${r.unit}`,
    r.baseline ? `${(r.measured / r.baseline).toFixed(2)}×` : '—',
  ]),
]
const widths = table[0]!.map((_, i) => Math.max(...table.map((row) => row[i]!.length)))
const text = table
  .map((row, n) => {
    const line = row
      .map((cell, i) => (i < 2 ? cell.padEnd(widths[i]!) : cell.padStart(widths[i]!)))
      .join('  ')
    return n === 0 ? `${line}\n${widths.map((w) => '-'.repeat(w)).join('  ')}` : line
  })
  .join('\n')
const stamp = new Date().toISOString()
writeFileSync('bench-results.txt', `Lightseam benchmarks, ${stamp}\n\n${text}\n`)
process.stdout.write(`\n${text}\n\nwritten to bench-results.txt\n`)

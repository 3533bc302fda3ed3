// The app shell reloaded with no network (DESIGN.md §5: ≤ 1 s): the service worker controls the page,
// the context is offline, and each reload is timed until the closures list is on screen, inside the page
// (navigation start to the first closure card, from performance.timeOrigin) so no playwright round trip
// counts. Run with `npx tsx tests/bench/offline-reload.bench.ts`.
import { pathToFileURL } from 'node:url'
import type { BenchFigure } from './board.bench'
import { launchBrowser } from '../e2e/support/browser'
import { startServer } from '../e2e/support/server'

const splicer = { email: 'maren.oduya@corvellford-fiber.test', password: 'splice-demo-1' }
const repetitions = 15

function percentile(sorted: number[], p: number): number {
  return sorted[Math.min(sorted.length - 1, Math.ceil((p / 100) * sorted.length) - 1)]!
}

export async function main(options: { log?: (line: string) => void } = {}): Promise<BenchFigure[]> {
  const log = options.log ?? (() => undefined)
  const server = await startServer()
  const browser = await launchBrowser({ viewport: { width: 360, height: 780 } })
  try {
    const page = await browser.context.newPage()
    await page.goto(server.url)
    await page.waitForFunction(() => document.documentElement.dataset.sw === 'registered')
    await page.evaluate(async () => navigator.serviceWorker.ready)
    await page.locator('input[data-testid=email]').fill(splicer.email)
    await page.locator('input[data-testid=password]').fill(splicer.password)
    await page.locator('[data-testid=sign-in]').click()
    const card = page.locator('[data-testid=closure-card]').first()
    await card.waitFor({ timeout: 60_000 })
    await page.reload()
    await card.waitFor()
    if (!(await page.evaluate(() => navigator.serviceWorker.controller !== null)))
      throw new Error('The service worker does not control the page.')
    await browser.context.setOffline(true)
    // Marks the first frame with a closure card, measured from the navigation's own start.
    await page.addInitScript(() => {
      new MutationObserver((_, observer) => {
        if (document.querySelector('[data-testid=closure-card]')) {
          ;(window as unknown as { shownAt: number }).shownAt = performance.now()
          observer.disconnect()
        }
      }).observe(document, { childList: true, subtree: true })
    })
    const times: number[] = []
    for (let i = 0; i < repetitions + 1; i++) {
      const answer = await page.reload()
      if (!answer?.fromServiceWorker()) throw new Error('The reload did not come from the service worker.')
      await page.waitForFunction(() => (window as unknown as { shownAt?: number }).shownAt !== undefined)
      const ms = await page.evaluate(() => (window as unknown as { shownAt: number }).shownAt)
      if (i > 0) times.push(ms) // the first offline reload warms the worker's cache lookups
    }
    times.sort((a, b) => a - b)
    log(`offline reloads (ms): ${times.map((t) => t.toFixed(0)).join(' ')}`)
    return [
      {
        figure: 'offline reload to closures list, median',
        target: 1000,
        measured: percentile(times, 50),
        unit: 'ms',
      },
      {
        figure: 'offline reload to closures list, p95',
        target: 1000,
        measured: percentile(times, 95),
        unit: 'ms',
      },
    ]
  } finally {
    await browser.close()
    await server.stop()
  }
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  for (const f of await main({ log: (line) => process.stdout.write(`${line}\n`) })) {
    process.stdout.write(`${f.figure}: ${f.measured.toFixed(1)} ${f.unit} (target ≤ ${f.target} ${f.unit})\n`)
  }
}

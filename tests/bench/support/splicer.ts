// What the browser benchmarks share: the real server with the demo scenario, one extra closure of 864
// fibers (12 ribbon trays of 72, a straight plan TR-864-A 1–864 to TR-864-B 1–864) assigned to the
// crew-1 splicer, and that splicer signed in on a phone-sized Chromium with the worker in control.
import type { Page } from 'playwright-core'
import { launchBrowser, type Browser } from '../../e2e/support/browser'
import { startServer, type RunningServer } from '../../e2e/support/server'
import { apiAs, people } from '../../e2e/support/review'

export const bigClosureLabel = 'VLT-09 Millrace Lane'

export interface SplicerSession {
  server: RunningServer
  browser: Browser
  page: Page
  bigClosureId: string
  close: () => Promise<void>
}

async function addBigClosure(base: string): Promise<string> {
  const office = await apiAs(base, 'office')
  const foreman = await apiAs(base, 'foreman')
  const splicer = await apiAs(base, 'splicer')
  const expect = (answer: { status: number; body: unknown }, what: string): unknown => {
    if (answer.status >= 300) throw new Error(`${what}: ${answer.status} ${JSON.stringify(answer.body)}`)
    return answer.body
  }
  const projects = expect(await office.call('GET', '/api/projects'), 'projects') as {
    items: Array<{ id: string }>
  }
  const projectId = projects.items[0]!.id
  const cables = expect(
    await office.call('GET', `/api/projects/${projectId}/cables?limit=100`),
    'cables',
  ) as {
    items: Array<{ id: string; label: string }>
  }
  const cableA = cables.items.find((c) => c.label.startsWith('TR-864-A'))!.id
  const cableB = cables.items.find((c) => c.label.startsWith('TR-864-B'))!.id
  const closureId = crypto.randomUUID()
  expect(
    await office.call('POST', `/api/projects/${projectId}/closures`, {
      id: closureId,
      projectId,
      label: bigClosureLabel,
      kind: 'vault',
      crewId: splicer.crewId,
    }),
    'closure',
  )
  for (let number = 1; number <= 12; number += 1) {
    expect(
      await office.call('POST', `/api/closures/${closureId}/trays`, {
        id: crypto.randomUUID(),
        closureId,
        number,
        capacity: 72,
      }),
      'tray',
    )
  }
  expect(
    await office.call('POST', `/api/closures/${closureId}/plan/generate`, {
      ranges: [{ cableA, cableB, fromA: 1, fromB: 1, count: 864 }],
    }),
    'plan',
  )
  expect(
    await foreman.call('PUT', `/api/closures/${closureId}/assignment`, { splicerIds: [splicer.id] }),
    'assignment',
  )
  return closureId
}

/** Starts everything and leaves the splicer on the closures list, the worker controlling the page. */
export async function splicerSession(): Promise<SplicerSession> {
  const server = await startServer()
  let browser: Browser | undefined
  try {
    const bigClosureId = await addBigClosure(server.url)
    browser = await launchBrowser({ viewport: { width: 360, height: 780 }, hasTouch: true })
    const page = await browser.context.newPage()
    // tsx names the functions it compiles with a `__name` helper, which the page does not have.
    await page.addInitScript({ content: 'window.__name = (fn) => fn' })
    await page.goto(server.url)
    await page.waitForFunction(() => document.documentElement.dataset.sw === 'registered')
    await page.evaluate(async () => navigator.serviceWorker.ready)
    await page.locator('input[data-testid=email]').fill(people.splicer.email)
    await page.locator('input[data-testid=password]').fill(people.splicer.password)
    await page.locator('[data-testid=sign-in]').click()
    const card = page.locator(`[data-testid=closure-card][data-closure="${bigClosureLabel}"]`)
    await card.waitFor({ timeout: 120_000 })
    await page.waitForFunction(
      () => document.querySelector('[data-testid=sync-indicator]')?.getAttribute('data-state') === 'synced',
      undefined,
      { timeout: 120_000 },
    )
    await page.reload()
    await card.waitFor()
    if (!(await page.evaluate(() => navigator.serviceWorker.controller !== null)))
      throw new Error('The service worker does not control the page.')
    const opened = browser
    return {
      server,
      browser,
      page,
      bigClosureId,
      async close() {
        await opened.close()
        await server.stop()
      },
    }
  } catch (error) {
    await browser?.close()
    await server.stop()
    throw error
  }
}

export function percentile(sorted: number[], p: number): number {
  return sorted[Math.min(sorted.length - 1, Math.max(0, Math.ceil((p / 100) * sorted.length) - 1))]!
}

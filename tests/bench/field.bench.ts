// The splicer's phone in headless Chromium (DESIGN.md §5):
// - save one splice, from the tap on "Save" reaching the page to the frame that shows the slot's new state
//   in the tray list, with the CPU slowed 4× through the DevTools protocol, on a closure of 864 fibers
//   (p95 ≤ 30 ms). The taps are touches on a touch screen; the time from the finger lifting is printed
//   beside it, which adds the browser's own tap recognition (about 10–20 ms here even unthrottled, with
//   the page idle, before any of the app's code runs);
// - with 50,000 splices on the device, open a closure: from the tap on its card to the frame showing its
//   trays (≤ 100 ms), unthrottled and again at 4× for comparison.
// Both are timed inside the page (performance.now), so no playwright round trip counts.
// Run with `npx tsx tests/bench/field.bench.ts`.
import { pathToFileURL } from 'node:url'
import type { CDPSession, Page } from 'playwright-core'
import type { BenchFigure } from './board.bench'
import { bigClosureLabel, percentile, splicerSession } from './support/splicer'

const saves = Number(process.env.LS_SAVES ?? 60)
const warmUp = 5
const deviceSplices = 50_000
const opens = 15

type Timed = Window & {
  lsTimes?: number[]
  lsLifted?: number[]
  lsArmed?: (started: number, lifted: number) => void
}

async function panelSlot(page: Page): Promise<number> {
  const title = (await page.locator('.ls-panel .text-h6').textContent()) ?? ''
  const match = /slot (\d+)$/.exec(title.trim())
  if (!match) throw new Error(`The splice panel shows no slot: "${title}"`)
  return Number(match[1])
}

/**
 * Times each "Save" to the frame after the slot's row leaves "to do": from the tap reaching the page (the
 * click, caught before any of the app's handlers) and from the finger lifting (the pointerup's own time
 * stamp). Only that row's `data-state` is watched, and the watch is set up before the tap, so the measuring
 * adds next to nothing to the frame it measures.
 */
async function instrumentSaves(page: Page): Promise<void> {
  await page.evaluate(() => {
    const w = window as Timed
    w.lsTimes = []
    w.lsLifted = []
    let lifted = 0
    window.addEventListener('pointerup', (event) => (lifted = event.timeStamp), true)
    window.addEventListener(
      'click',
      (event) => {
        if (w.lsArmed && (event.target as Element).closest('[data-testid=save-splice]'))
          w.lsArmed(performance.now(), lifted)
      },
      true,
    )
  })
}

/** Watches the row of the slot the panel shows; the next tap on "Save" starts the clock. */
async function armSave(page: Page): Promise<void> {
  await page.evaluate(() => {
    const w = window as Timed
    const title = document.querySelector('.ls-panel .text-h6')?.textContent ?? ''
    const slot = /slot (\d+)$/.exec(title.trim())?.[1]
    const row = document.querySelector<HTMLElement>(`li[data-slot="${slot}"]`)
    if (!row) throw new Error(`No row for slot ${slot} in the list`)
    w.lsArmed = (started, lifted) => {
      w.lsArmed = undefined
      const observer = new MutationObserver(() => {
        if (row.dataset.state === 'todo') return
        observer.disconnect()
        requestAnimationFrame(() => {
          const now = performance.now()
          w.lsTimes!.push(now - started)
          w.lsLifted!.push(now - lifted)
        })
      })
      observer.observe(row, { attributes: true, attributeFilter: ['data-state'] })
    }
  })
}

/**
 * A finger's tap on the element, on the phone's touch screen: scrolled into view first, as the splicer
 * would; then, once the page has settled from the tap before (an idle callback: a splicer's taps are
 * hundreds of milliseconds apart, the test tool's a few), touched and lifted at its centre, with no
 * test-tool checks running in the page.
 */
async function tap(page: Page, selector: string): Promise<void> {
  const target = page.locator(selector)
  await target.scrollIntoViewIfNeeded()
  const box = await target.boundingBox()
  if (!box) throw new Error(`${selector} is not on screen`)
  await page.evaluate(
    () => new Promise<void>((resolve) => requestIdleCallback(() => resolve(), { timeout: 1000 })),
  )
  await page.touchscreen.tap(box.x + box.width / 2, box.y + box.height / 2)
}

async function typeLoss(page: Page, text: string): Promise<void> {
  await tap(page, '[data-key="clear"]')
  for (const key of text) await tap(page, `[data-key="${key}"]`)
}

/**
 * Each save's time from the tap reaching the page and from the finger lifting (ms), warm-up left out: `count`
 * saves from slot 1 of tray `tray` of the big closure, starting on the closures list.
 */
export async function measureSaves(
  page: Page,
  cdp: CDPSession,
  rate = 4,
  { tray = 1, count = saves } = {},
): Promise<{ fromTap: number[]; fromLift: number[] }> {
  await page.locator(`[data-testid=closure-card][data-closure="${bigClosureLabel}"]`).click()
  await page.locator(`[data-tray="${tray}"]`).click()
  await page.locator('[data-testid=tray-title]').waitFor()
  await page.locator('li[data-slot="72"]').waitFor()
  await instrumentSaves(page)
  await cdp.send('Emulation.setCPUThrottlingRate', { rate })
  await page.locator('li[data-slot="1"] button').click()
  await page.locator('[data-testid=save-splice]').waitFor()
  for (let n = 0; n < count; n += 1) {
    const slot = await panelSlot(page)
    await typeLoss(page, n % 2 === 0 ? '0.02' : '0.04')
    await armSave(page)
    await tap(page, '[data-testid=save-splice]')
    await page
      .waitForFunction((count) => ((window as Timed).lsTimes?.length ?? 0) > count, n, { timeout: 10_000 })
      .catch(async (error: unknown) => {
        const state = await page.evaluate(
          (s) => [
            document.querySelector(`li[data-slot="${s}"]`)?.getAttribute('data-state'),
            (window as Timed).lsTimes,
          ],
          slot,
        )
        throw new Error(`save ${n} (slot ${slot}) not seen: ${JSON.stringify(state)}`, { cause: error })
      })
    // The panel moves on to the next slot by itself; the last slot of a tray closes it.
    if (n < count - 1)
      await page.waitForFunction((was) => {
        const title = document.querySelector('.ls-panel .text-h6')?.textContent ?? ''
        return !title.trim().endsWith(`slot ${was}`)
      }, slot)
  }
  await cdp.send('Emulation.setCPUThrottlingRate', { rate: 1 })
  const [fromTap, fromLift] = await page.evaluate(() => [
    (window as Timed).lsTimes!,
    (window as Timed).lsLifted!,
  ])
  await page.getByRole('button', { name: 'Close' }).click()
  return { fromTap: fromTap!.slice(warmUp), fromLift: fromLift!.slice(warmUp) }
}

/** Fills the device database to `deviceSplices` splices: the rest of the big closure, then other closures. */
async function fillDevice(page: Page, bigClosureId: string): Promise<number> {
  return page.evaluate(
    async ({ closureId, target }) => {
      const name = (await indexedDB.databases()).map((d) => d.name).find((n) => n?.startsWith('lightseam-'))!
      const db = await new Promise<IDBDatabase>((resolve, reject) => {
        const open = indexedDB.open(name)
        open.onsuccess = () => resolve(open.result)
        open.onerror = () => reject(open.error)
      })
      const all = <T>(store: string) =>
        new Promise<T[]>((resolve) => {
          const request = db.transaction(store).objectStore(store).getAll()
          request.onsuccess = () => resolve(request.result as T[])
        })
      type Row = Record<string, unknown> & { closureId: string; trayId: string; slot: number }
      const splices = await all<Row>('splices')
      const trays = (await all<{ id: string; closureId: string; number: number }>('trays')).filter(
        (t) => t.closureId === closureId,
      )
      const sample = splices.find((s) => s.closureId === closureId)!
      const taken = new Set(
        splices.filter((s) => s.closureId === closureId).map((s) => `${s.trayId}:${s.slot}`),
      )
      const rows: Row[] = []
      for (const tray of trays)
        for (let slot = 1; slot <= 72; slot += 1) {
          if (taken.has(`${tray.id}:${slot}`)) continue
          const fiber = (tray.number - 1) * 72 + slot
          rows.push({
            ...sample,
            id: crypto.randomUUID(),
            trayId: tray.id,
            slot,
            fiberA: fiber,
            fiberB: fiber,
          })
        }
      // Other closures' work: 500 splices each, as a season's worth of closures would leave.
      let other = crypto.randomUUID()
      while (splices.length + rows.length < target) {
        const n = splices.length + rows.length
        if (n % 500 === 0) other = crypto.randomUUID()
        rows.push({ ...sample, id: crypto.randomUUID(), closureId: other, trayId: other, slot: (n % 72) + 1 })
      }
      await new Promise<void>((resolve, reject) => {
        const tx = db.transaction('splices', 'readwrite')
        for (const row of rows) tx.objectStore('splices').put(row)
        tx.oncomplete = () => resolve()
        tx.onerror = () => reject(tx.error)
      })
      const count = await new Promise<number>((resolve) => {
        const request = db.transaction('splices').objectStore('splices').count()
        request.onsuccess = () => resolve(request.result)
      })
      db.close()
      return count
    },
    { closureId: bigClosureId, target: deviceSplices },
  )
}

/** Times opening the big closure from the closures list: tap → its trays on screen → next frame. */
async function measureOpens(page: Page): Promise<number[]> {
  const times: number[] = []
  for (let n = 0; n < opens + 1; n += 1) {
    await page.goBack()
    const card = page.locator(`[data-testid=closure-card][data-closure="${bigClosureLabel}"]`)
    await card.waitFor()
    await page.evaluate(() => {
      const w = window as Timed
      w.lsTimes = []
      document.addEventListener(
        'click',
        () => {
          const started = performance.now()
          const observer = new MutationObserver(() => {
            if (document.querySelectorAll('[data-tray]').length < 12) return
            observer.disconnect()
            requestAnimationFrame(() => w.lsTimes!.push(performance.now() - started))
          })
          observer.observe(document.body, { subtree: true, childList: true })
        },
        { capture: true, once: true },
      )
    })
    await card.click()
    await page.waitForFunction(() => ((window as Timed).lsTimes?.length ?? 0) > 0)
    const [ms] = await page.evaluate(() => (window as Timed).lsTimes!)
    if (n > 0) times.push(ms!) // the first open warms the page's code paths
  }
  return times.sort((a, b) => a - b)
}

export async function main(options: { log?: (line: string) => void } = {}): Promise<BenchFigure[]> {
  const log = options.log ?? (() => undefined)
  const session = await splicerSession()
  try {
    const { page } = session
    const cdp = await page.context().newCDPSession(page)
    const saved = await measureSaves(page, cdp)
    const saveTimes = saved.fromTap.sort((a, b) => a - b)
    const liftTimes = saved.fromLift.sort((a, b) => a - b)
    log(`saves at 4× CPU slow-down, from the tap (ms): ${saveTimes.map((t) => t.toFixed(0)).join(' ')}`)
    log(`the same from the finger lifting (ms): ${liftTimes.map((t) => t.toFixed(0)).join(' ')}`)
    // The browser's own share of a tap, for comparison: the same saves on another tray, unthrottled.
    await page.goto(session.server.url)
    const quick = await measureSaves(page, cdp, 1, { tray: 2, count: 25 })
    const quickLift = quick.fromLift.sort((a, b) => a - b)
    const quickTap = quick.fromTap.sort((a, b) => a - b)
    log(`unthrottled, from the finger lifting (ms): ${quickLift.map((t) => t.toFixed(0)).join(' ')}`)
    const held = await fillDevice(page, session.bigClosureId)
    log(`device now holds ${held} splices`)
    await page.goto(session.server.url)
    await page.locator(`[data-testid=closure-card][data-closure="${bigClosureLabel}"]`).click()
    await page.locator('[data-tray="1"]').waitFor()
    const openTimes = await measureOpens(page)
    log(`open closure, 50k splices on the device (ms): ${openTimes.map((t) => t.toFixed(0)).join(' ')}`)
    await cdp.send('Emulation.setCPUThrottlingRate', { rate: 4 })
    const slowOpens = await measureOpens(page)
    await cdp.send('Emulation.setCPUThrottlingRate', { rate: 1 })
    log(`the same at 4× CPU slow-down (ms): ${slowOpens.map((t) => t.toFixed(0)).join(' ')}`)
    return [
      {
        figure: 'save a splice, 864-fiber closure, 4× CPU, p50',
        target: null,
        measured: percentile(saveTimes, 50),
        unit: 'ms',
      },
      {
        figure: 'save a splice, 864-fiber closure, 4× CPU, p95',
        target: 30,
        measured: percentile(saveTimes, 95),
        unit: 'ms',
      },
      {
        figure: 'save a splice, 4× CPU, from the finger lifting, p95',
        target: null,
        measured: percentile(liftTimes, 95),
        unit: 'ms',
      },
      {
        figure: 'save a splice, unthrottled, from the finger lifting, p50',
        target: null,
        measured: percentile(quickLift, 50),
        unit: 'ms',
      },
      {
        figure: 'save a splice, unthrottled, from the tap, p50',
        target: null,
        measured: percentile(quickTap, 50),
        unit: 'ms',
      },
      {
        figure: 'open a closure, 50k splices on device, median',
        target: 100,
        measured: percentile(openTimes, 50),
        unit: 'ms',
      },
      {
        figure: 'open a closure, 50k splices on device, p95',
        target: null,
        measured: percentile(openTimes, 95),
        unit: 'ms',
      },
      {
        figure: 'open a closure, 50k splices, 4× CPU, median',
        target: null,
        measured: percentile(slowOpens, 50),
        unit: 'ms',
      },
    ]
  } finally {
    await session.close()
  }
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  for (const f of await main({ log: (line) => process.stdout.write(`${line}\n`) })) {
    process.stdout.write(
      `${f.figure}: ${f.measured.toFixed(1)} ${f.unit}${f.target ? ` (target ≤ ${f.target} ${f.unit})` : ''}\n`,
    )
  }
}

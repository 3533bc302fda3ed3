import { join } from 'node:path'
import { type Page } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { artifactsDir, launchBrowser, type Browser } from './support/browser'
import { startServer, type RunningServer } from './support/server'

const splicer = { email: 'maren.oduya@corvellford-fiber.test', password: 'splice-demo-1' }
const office = { email: 'priya.halvorsen@corvellford-fiber.test', password: 'office-demo-1' }
const closureLabel = 'VLT-01 Weir Road'

type ServerSplice = {
  id: string
  slot: number
  lossDb: number | null
  attempt: number
  clientId: string
  isCurrent: boolean
  supersedesId: string | null
  respliceReason: string | null
}

async function shot(page: Page, name: string, fullPage = true) {
  // Let dialog and menu transitions finish.
  if (!fullPage) await page.waitForTimeout(350)
  const path = join(artifactsDir, `field-${name}.png`)
  const size = page.viewportSize()!
  await page.screenshot({ path, fullPage })
  // A full-page shot of a long tray can leave the viewport stretched; put the phone's size back.
  if (fullPage) await page.setViewportSize(size)
}

async function panelSlot(page: Page): Promise<number | null> {
  const title = await page
    .locator('.ls-panel .text-h6')
    .textContent()
    .catch(() => null)
  const match = /slot (\d+)$/.exec(title?.trim() ?? '')
  return match ? Number(match[1]) : null
}

async function typeLoss(page: Page, text: string) {
  await page.locator('[data-key="clear"]').click()
  for (const key of text) await page.locator(`[data-key="${key}"]`).click()
}

/** Reads what the device holds (clientId, photos) straight from its IndexedDB database. */
async function deviceState(page: Page) {
  return page.evaluate(async () => {
    const names = (await indexedDB.databases())
      .map((db) => db.name)
      .filter((n) => n?.startsWith('lightseam-'))
    const db = await new Promise<IDBDatabase>((resolve, reject) => {
      const open = indexedDB.open(names[0]!)
      open.onsuccess = () => resolve(open.result)
      open.onerror = () => reject(open.error)
    })
    const all = <T>(table: string) =>
      new Promise<T[]>((resolve) => {
        const request = db.transaction(table).objectStore(table).getAll()
        request.onsuccess = () => resolve(request.result as T[])
      })
    const [meta] = await all<{ clientId: string }>('meta')
    const photos = await all<{ sha256: string; bytes: ArrayBuffer; uploaded: number }>('photos')
    const outbox = await all<unknown>('outbox')
    db.close()
    return {
      clientId: meta!.clientId,
      outbox: outbox.length,
      photos: photos.map((p) => ({
        sha256: p.sha256,
        uploaded: p.uploaded,
        bytes: Array.from(new Uint8Array(p.bytes)),
      })),
    }
  })
}

describe('the splicer in the field (Chromium, phone)', () => {
  let server: RunningServer
  let browser: Browser

  beforeAll(async () => {
    server = await startServer()
    browser = await launchBrowser()
  })

  afterAll(async () => {
    await browser?.close()
    await server?.stop()
  })

  it('when a splicer signs in, works offline and closes the app, then the server gets exactly that work', async () => {
    const { context } = browser
    const page = await context.newPage()
    await page.goto(server.url)
    await page.waitForURL(/\/sign-in/)
    await page.waitForFunction(() => document.documentElement.dataset.sw === 'registered')
    await page.evaluate(async () => navigator.serviceWorker.ready)
    await shot(page, 'sign-in-light')

    await page.locator('input[data-testid=email]').fill(splicer.email)
    await page.locator('input[data-testid=password]').fill(splicer.password)
    await page.locator('[data-testid=sign-in]').click()
    const card = page.locator(`[data-testid=closure-card][data-closure="${closureLabel}"]`)
    await card.waitFor({ timeout: 30_000 })
    expect(await page.locator('[data-testid=closure-card]').count()).toBe(4)
    await expect
      .poll(() => page.locator('[data-testid=sync-indicator]').getAttribute('data-state'))
      .toBe('synced')
    await shot(page, 'closures-light')

    // Reload once online so the worker controls the page, then cut the network.
    await page.reload()
    await card.waitFor()
    await context.setOffline(true)
    const offline = await page.reload()
    expect(offline?.fromServiceWorker()).toBe(true)
    await card.waitFor()
    expect(await page.locator('header').textContent()).toContain('Offline')

    await card.click()
    await page.locator('[data-caution=confined-space]').waitFor()
    const closureId = new URL(page.url()).pathname.split('/')[2]!
    await shot(page, 'closure-light')
    // The first tray with planned slots still to do.
    let slots: number[] = []
    for (let tray = 1; slots.length < 3; tray += 1) {
      if (tray > 1) await page.goBack()
      await page.locator(`[data-tray="${tray}"]`).click()
      await page.locator('[data-testid=tray-title]').waitFor()
      await page.locator('li[data-slot]').first().waitFor()
      slots = (
        await page
          .locator('li[data-state=todo]')
          .evaluateAll((items) => items.map((item) => Number((item as HTMLElement).dataset.slot)))
      ).slice(0, 3)
    }
    const [first, second, third] = slots as [number, number, number]
    await shot(page, 'tray-light')

    // First slot: on target; the panel then moves on to the next slot by itself.
    await page.locator(`li[data-slot="${first}"] button`).click()
    await page.locator('[data-testid=save-splice]').waitFor()
    await typeLoss(page, '0.02')
    await shot(page, 'splice-light', false)
    await page.locator('[data-testid=save-splice]').click()
    await expect.poll(() => panelSlot(page)).toBe(second)

    // Second slot: over target, re-spliced with a reason and a photo.
    await typeLoss(page, '0.15')
    await page.locator('[data-testid=over-target]').waitFor()
    await shot(page, 'over-target-light', false)
    await page.locator('[data-testid=save-resplice]').click()
    await page.getByText('Attempt 2').waitFor()
    await page.locator('[data-reason=bubble]').click()
    await typeLoss(page, '0.03')
    const jpeg = await page.evaluate(async () => {
      const canvas = document.createElement('canvas')
      canvas.width = 320
      canvas.height = 240
      const g = canvas.getContext('2d')!
      g.fillStyle = '#0f6e6a'
      g.fillRect(0, 0, 320, 240)
      g.fillStyle = '#e0a100'
      g.fillRect(40, 40, 120, 80)
      const blob = await new Promise<Blob>((resolve) => canvas.toBlob((b) => resolve(b!), 'image/jpeg', 0.9))
      return Array.from(new Uint8Array(await blob.arrayBuffer()))
    })
    await page
      .locator('input[data-testid=photo-input]')
      .setInputFiles({ name: 'tray1-slot2.jpg', mimeType: 'image/jpeg', buffer: Buffer.from(jpeg) })
    await page.locator('[data-testid=photo-chosen]').waitFor()
    await page.locator('[data-testid=save-splice]').click()
    await expect.poll(() => panelSlot(page)).toBe(third)
    await page.getByRole('button', { name: 'Close' }).click()
    await expect
      .poll(() => page.locator(`li[data-slot="${second}"]`).getAttribute('data-state'))
      .toBe('resplice')
    await expect.poll(() => page.locator('[data-testid=sync-indicator]').textContent()).toContain('4 queued')

    // The app is closed and opened again, still without signal: nothing is lost.
    await page.close()
    const again = await context.newPage()
    await again.goto(server.url)
    await again.locator(`[data-testid=closure-card][data-closure="${closureLabel}"]`).waitFor()
    await expect.poll(() => again.locator('[data-testid=sync-indicator]').textContent()).toContain('4 queued')
    expect(await again.locator(`[data-closure="${closureLabel}"]`).textContent()).toContain('4 to send')
    const device = await deviceState(again)
    expect(device.outbox).toBe(4)
    expect(device.photos).toHaveLength(1)
    // Signing out with work queued warns first; staying keeps everything.
    await again.locator('[data-testid=settings]').click()
    await again.locator('[data-testid=sign-out]').click()
    await again.getByText('Changes not sent yet').waitFor()
    await again.getByRole('button', { name: 'Stay signed in' }).click()
    expect(new URL(again.url()).pathname).toBe('/')

    await context.setOffline(false)
    await again.evaluate(() => window.dispatchEvent(new Event('online')))
    await expect
      .poll(() => again.locator('[data-testid=sync-indicator]').getAttribute('data-state'), {
        timeout: 30_000,
      })
      .toBe('synced')
    await expect.poll(async () => (await deviceState(again)).photos[0]?.uploaded, { timeout: 30_000 }).toBe(1)

    await again.locator('[data-testid=sync-indicator]').click()
    await again.locator('[data-testid=sync-details]').waitFor()
    await shot(again, 'sync-light', false)

    // The office sees exactly those splices and the photo's bytes.
    const signIn = await fetch(`${server.url}/api/auth/sign-in`, {
      method: 'POST',
      headers: { 'content-type': 'application/json' },
      body: JSON.stringify(office),
    })
    const { accessToken } = (await signIn.json()) as { accessToken: string }
    const auth = { authorization: `Bearer ${accessToken}` }
    const list = await fetch(`${server.url}/api/splices?closureId=${closureId}&current=all&limit=500`, {
      headers: auth,
    })
    expect(list.status).toBe(200)
    const body = (await list.json()) as { items: ServerSplice[] }
    const ours = body.items
      .filter((s) => s.clientId === device.clientId)
      .sort((a, b) => a.slot - b.slot || a.attempt - b.attempt)
    expect(ours.map((s) => [s.slot, s.attempt, s.lossDb, s.isCurrent, s.respliceReason])).toEqual([
      [first, 1, 0.02, true, null],
      [second, 1, 0.15, false, null],
      [second, 2, 0.03, true, 'bubble'],
    ])
    expect(ours[2]!.supersedesId).toBe(ours[1]!.id)
    const photo = await fetch(`${server.url}/api/photos/${device.photos[0]!.sha256}`, { headers: auth })
    expect(photo.status).toBe(200)
    expect(Array.from(new Uint8Array(await photo.arrayBuffer()))).toEqual(device.photos[0]!.bytes)
    await again.close()
  })

  it('when the phone is narrow and dark, then every field screen is shown in the dark theme', async () => {
    const dark = await launchBrowser({ colorScheme: 'dark', viewport: { width: 360, height: 780 } })
    try {
      const page = await dark.context.newPage()
      await page.goto(server.url)
      await page.waitForURL(/\/sign-in/)
      await shot(page, 'sign-in-dark')
      await page.locator('input[data-testid=email]').fill(splicer.email)
      await page.locator('input[data-testid=password]').fill(splicer.password)
      await page.locator('[data-testid=sign-in]').click()
      const card = page.locator(`[data-testid=closure-card][data-closure="${closureLabel}"]`)
      await card.waitFor({ timeout: 30_000 })
      expect(await page.evaluate(() => document.body.classList.contains('body--dark'))).toBe(true)
      // Opened again with signal: the remembered session refreshes once and stays signed in.
      await page.reload()
      await card.waitFor()
      await expect
        .poll(() => page.locator('[data-testid=sync-indicator]').getAttribute('data-state'))
        .toBe('synced')
      await page.reload()
      await card.waitFor()
      await expect
        .poll(() => page.locator('[data-testid=sync-indicator]').getAttribute('data-state'))
        .toBe('synced')
      expect(await page.evaluate(() => document.documentElement.scrollWidth)).toBeLessThanOrEqual(360)
      await shot(page, 'closures-dark')
      await card.click()
      await page.locator('[data-testid=cautions]').waitFor()
      await shot(page, 'closure-dark')
      await page.locator('[data-tray="1"]').click()
      await page.locator('li[data-state=logged]').first().waitFor()
      await shot(page, 'tray-dark', false)
      await page.locator('li[data-state=logged] button').first().click()
      await page.locator('[data-testid=current-splice]').waitFor()
      await shot(page, 'splice-view-dark', false)
      await page.locator('[data-testid=start-resplice]').click()
      await typeLoss(page, '0.15')
      await page.locator('[data-testid=over-target]').waitFor()
      await shot(page, 'resplice-dark', false)
      await page.getByRole('button', { name: 'Close' }).click()
      await page.locator('[data-testid=sync-indicator]').click()
      await page.locator('[data-testid=sync-details]').waitFor()
      await shot(page, 'sync-dark', false)
      await page.keyboard.press('Escape')
      await page.locator('[data-testid=settings]').click()
      await page.locator('[data-testid=high-contrast]').click()
      expect(await page.evaluate(() => document.body.classList.contains('ls-high-contrast'))).toBe(true)
      await shot(page, 'settings-contrast-dark', false)
      await page.locator('[data-testid=sign-out]').click()
      await page.waitForURL(/\/sign-in/)
      expect(await page.locator('input[data-testid=email]').inputValue()).toBe(splicer.email)
    } finally {
      await dark.close()
    }
  })
})

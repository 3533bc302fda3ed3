import type { BrowserContext, Page } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { launchBrowser } from './support/browser'
import { startServer, type RunningServer } from './support/server'

const splicer = { email: 'maren.oduya@corvellford-fiber.test', password: 'splice-demo-1' }
const office = { email: 'priya.halvorsen@corvellford-fiber.test', password: 'office-demo-1' }
const closureLabel = 'VLT-01 Weir Road'
const tokenSeconds = 5

/**
 * Signs the splicer in, lets the service worker take control, goes offline and logs one splice of
 * estimated loss `loss` in the first slot still to do; answers the closure's id once it is queued.
 */
async function queueOneSpliceOffline(
  base: string,
  page: Page,
  context: BrowserContext,
  loss: string,
): Promise<string> {
  await page.goto(base)
  await page.waitForFunction(() => document.documentElement.dataset.sw === 'registered')
  await page.locator('input[data-testid=email]').fill(splicer.email)
  await page.locator('input[data-testid=password]').fill(splicer.password)
  await page.locator('[data-testid=sign-in]').click()
  const card = page.locator(`[data-testid=closure-card][data-closure="${closureLabel}"]`)
  await card.waitFor({ timeout: 60_000 })
  await expect
    .poll(() => page.locator('[data-testid=sync-indicator]').getAttribute('data-state'), {
      timeout: 30_000,
    })
    .toBe('synced')

  // Reload once online so the service worker controls the page (a first load is not controlled).
  await page.evaluate(async () => {
    await navigator.serviceWorker.ready
  })
  await page.reload()
  await page.waitForFunction(() => navigator.serviceWorker.controller !== null, undefined, {
    timeout: 60_000,
  })
  await card.waitFor({ timeout: 60_000 })
  await context.setOffline(true)
  await card.click()
  await page.waitForURL(/\/closures\/[^/]+$/)
  const closureId = new URL(page.url()).pathname.split('/')[2]!
  let slot: number | undefined
  for (let tray = 1; slot === undefined; tray += 1) {
    if (tray > 1) await page.goBack()
    await page.locator(`[data-tray="${tray}"]`).click()
    await page.locator('li[data-slot]').first().waitFor()
    const todo = await page
      .locator('li[data-state=todo]')
      .evaluateAll((items) => items.map((item) => Number((item as HTMLElement).dataset.slot)))
    slot = todo[0]
  }
  await page.locator(`li[data-slot="${slot}"] button`).click()
  await page.locator('[data-key="clear"]').click()
  for (const key of loss) await page.locator(`[data-key="${key}"]`).click()
  await page.locator('[data-testid=save-splice]').click()
  await expect.poll(() => page.locator('[data-testid=sync-indicator]').textContent()).toContain('1 queued')
  return closureId
}

/** The closure's splices, every attempt, as the office reads them through the API. */
async function splicesAsOffice(base: string, closureId: string): Promise<Response> {
  const signIn = await fetch(`${base}/api/auth/sign-in`, {
    method: 'POST',
    headers: { 'content-type': 'application/json' },
    body: JSON.stringify(office),
  })
  const { accessToken } = (await signIn.json()) as { accessToken: string }
  return fetch(`${base}/api/splices?closureId=${closureId}&current=all&limit=500`, {
    headers: { authorization: `Bearer ${accessToken}` },
  })
}

describe('an access token that runs out while the phone is offline (Chromium)', () => {
  let server: RunningServer
  beforeAll(async () => {
    server = await startServer({ env: { LIGHTSEAM_TEST_ACCESS_TOKEN_SECONDS: String(tokenSeconds) } })
  })
  afterAll(async () => {
    await server?.stop()
  })

  it('when the token expires offline, then the queue is kept and syncs through a refresh once online', async () => {
    const browser = await launchBrowser({ viewport: { width: 360, height: 780 } })
    try {
      const { context } = browser
      const page = await context.newPage()
      const closureId = await queueOneSpliceOffline(server.url, page, context, '0.04')

      // Past the token's lifetime, still offline: the work stays queued on the device.
      await page.waitForTimeout((tokenSeconds + 2) * 1000)
      await expect
        .poll(() => page.locator('[data-testid=sync-indicator]').textContent())
        .toContain('1 queued')

      await context.setOffline(false)
      await page.evaluate(() => window.dispatchEvent(new Event('online')))
      await expect
        .poll(() => page.locator('[data-testid=sync-indicator]').getAttribute('data-state'), {
          timeout: 60_000,
        })
        .toBe('synced')

      const list = await splicesAsOffice(server.url, closureId)
      const body = (await list.json()) as {
        items: { slot: number; lossDb: number | null; splicedAt: string }[]
      }
      const logged = body.items.filter((s) => s.lossDb === 0.04)
      expect(logged).toHaveLength(1)
    } finally {
      await browser.close()
    }
  })

  it('when the refresh is refused too, then the app asks to sign in again, keeps the queue and sends it once', async () => {
    const browser = await launchBrowser({ viewport: { width: 360, height: 780 } })
    try {
      const { context } = browser
      const page = await context.newPage()
      const closureId = await queueOneSpliceOffline(server.url, page, context, '0.06')
      await page.getByRole('button', { name: 'Close' }).click()

      // The session is ended on the server while the phone is away (its refresh token revoked).
      const refreshCookie = (await context.cookies(`${server.url}/api/auth/refresh`)).find(
        (c) => c.name === 'ls_refresh',
      )!
      const ended = await fetch(`${server.url}/api/auth/sign-out`, {
        method: 'POST',
        headers: { cookie: `ls_refresh=${refreshCookie.value}` },
      })
      expect(ended.status).toBe(204)
      await page.waitForTimeout((tokenSeconds + 2) * 1000)

      await context.setOffline(false)
      await page.evaluate(() => window.dispatchEvent(new Event('online')))
      await expect
        .poll(() => page.locator('[data-testid=sync-indicator]').getAttribute('data-state'), {
          timeout: 60_000,
        })
        .toBe('signin')
      await page.locator('[data-testid=sync-indicator]').click()
      const details = page.locator('[data-testid=sync-details]')
      await details.waitFor()
      expect(await details.textContent()).toContain('1 change waiting on this device.')
      await page.getByRole('button', { name: 'Sign in again' }).click()
      await page.waitForURL(/\/sign-in/)
      await page.locator('input[data-testid=password]').fill(splicer.password)
      if (!(await page.locator('input[data-testid=email]').inputValue()))
        await page.locator('input[data-testid=email]').fill(splicer.email)
      await page.locator('[data-testid=sign-in]').click()
      await expect
        .poll(() => page.locator('[data-testid=sync-indicator]').getAttribute('data-state'), {
          timeout: 60_000,
        })
        .toBe('synced')

      const list = await splicesAsOffice(server.url, closureId)
      const body = (await list.json()) as { items: { slot: number; lossDb: number | null }[] }
      expect(list.status, JSON.stringify(body)).toBe(200)
      expect(body.items.filter((s) => s.lossDb === 0.06)).toHaveLength(1)
    } finally {
      await browser.close()
    }
  })
})

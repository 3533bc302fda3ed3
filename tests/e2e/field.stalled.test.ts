import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { launchBrowser, signInAt, type Browser } from './support/browser'
import { startServer, type RunningServer } from './support/server'
import { startStallingProxy, type StallingProxy } from './support/stallingProxy'

const splicer = { email: 'maren.oduya@corvellford-fiber.test', password: 'splice-demo-1' }
const closureLabel = 'VLT-01 Weir Road'

describe('the app opened on a network that connects but never answers (Chromium, phone)', () => {
  let server: RunningServer
  let proxy: StallingProxy
  let browser: Browser

  beforeAll(async () => {
    server = await startServer()
    proxy = await startStallingProxy(server.url)
    browser = await launchBrowser()
  })

  afterAll(async () => {
    await browser?.close()
    await proxy?.close()
    await server?.stop()
  })

  it('when the session refresh hangs, then the remembered splicer still gets their closures within seconds', async () => {
    const page = await browser.context.newPage()
    await signInAt(page, proxy.url, splicer)
    await page.evaluate(async () => navigator.serviceWorker.ready)
    const card = page.locator(`[data-testid=closure-card][data-closure="${closureLabel}"]`)
    await card.waitFor({ timeout: 30_000 })
    await expect
      .poll(() => page.locator('[data-testid=sync-indicator]').getAttribute('data-state'))
      .toBe('synced')
    // Reloaded once online, so the worker controls the page and serves the shell from then on. Requests
    // wait for the start-up refresh instead of going out without a token and coming back 401.
    const refused: string[] = []
    page.on('response', (response) => {
      if (response.status() === 401) refused.push(response.url())
    })
    await page.reload()
    await card.waitFor()
    await page.waitForFunction(() => navigator.serviceWorker.controller !== null)
    await expect
      .poll(() => page.locator('[data-testid=sync-indicator]').getAttribute('data-state'))
      .toBe('synced')
    expect(refused).toEqual([])

    proxy.stall()
    const opened = Date.now()
    await page.reload()
    await card.waitFor({ timeout: 15_000 })
    const waitedMs = Date.now() - opened
    // The start-up refresh still hangs (it gives up after 20 s); the closures come from the device meanwhile.
    expect(waitedMs).toBeLessThan(12_000)
    expect(await page.locator('[data-testid=closure-card]').count()).toBe(4)

    // Once the network answers again, the next sync brings the session back without a new sign-in.
    proxy.flow()
    await expect
      .poll(() => page.locator('[data-testid=sync-indicator]').getAttribute('data-state'), {
        timeout: 60_000,
      })
      .toBe('synced')
    expect(page.url()).not.toContain('/sign-in')
  }, 240_000)
})

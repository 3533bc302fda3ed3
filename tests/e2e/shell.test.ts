import { join } from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { artifactsDir, launchBrowser, type Browser } from './support/browser'
import { startServer, type RunningServer } from './support/server'

describe('app shell in Chromium', () => {
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

  it('when the built app is opened, then the shell renders and the service worker registers', async () => {
    const page = await browser.context.newPage()
    const response = await page.goto(server.url)
    expect(response?.status()).toBe(200)
    await expect.poll(() => page.locator('header').textContent()).toContain('Lightseam')
    await page.waitForFunction(() => document.documentElement.dataset.sw === 'registered', null, {
      timeout: 30_000,
    })
    const scope = await page.evaluate(async () => (await navigator.serviceWorker.ready).scope)
    expect(scope).toBe(`${server.url}/`)
    await page.screenshot({ path: join(artifactsDir, 'shell-phone-light.png'), fullPage: true })

    const health = await page.request.get(`${server.url}/api/health`)
    expect(await health.json()).toMatchObject({ status: 'ok' })
    const manifest = await page.request.get(`${server.url}/manifest.webmanifest`)
    expect(await manifest.json()).toMatchObject({ name: 'Lightseam', display: 'standalone' })
  })

  it('when the page is reloaded with the network cut, then the worker still serves the shell', async () => {
    const page = await browser.context.newPage()
    await page.goto(server.url)
    await page.evaluate(async () => navigator.serviceWorker.ready)
    await page.reload()
    await browser.context.setOffline(true)
    try {
      const response = await page.reload()
      expect(response?.fromServiceWorker()).toBe(true)
      await expect.poll(() => page.locator('header').textContent()).toContain('Lightseam')
    } finally {
      await browser.context.setOffline(false)
    }
  })

  it('when the device prefers dark, then the shell follows it (vault work at night)', async () => {
    const dark = await launchBrowser({ colorScheme: 'dark' })
    try {
      const page = await dark.context.newPage()
      await page.goto(server.url)
      await expect.poll(() => page.evaluate(() => document.body.classList.contains('body--dark'))).toBe(true)
      await page.screenshot({ path: join(artifactsDir, 'shell-phone-dark.png'), fullPage: true })
    } finally {
      await dark.close()
    }
  })

  it('when a deep link is opened, then the server answers with the shell (history fallback)', async () => {
    const response = await browser.context.request.get(`${server.url}/closures/anything`)
    expect(response.status()).toBe(200)
    expect(await response.text()).toContain('<div id="app">')
    const api = await browser.context.request.get(`${server.url}/api/nope`)
    expect(api.status()).toBe(404)
    expect(await api.json()).toMatchObject({ error: { code: 'not_found' } })
  })
})

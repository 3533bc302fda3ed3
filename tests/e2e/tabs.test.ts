import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { launchBrowser, type Browser } from './support/browser'
import { startServer, type RunningServer } from './support/server'

// Every tab of the app refreshes its own access token from the one shared refresh cookie. The server ends
// the session when a spent refresh token comes back (it takes that for theft), so tabs opening together
// must take turns: each then presents the cookie the one before it left behind.

const splicer = { email: 'maren.oduya@corvellford-fiber.test', password: 'splice-demo-1' }

let server: RunningServer
let browser: Browser

beforeAll(async () => {
  server = await startServer()
  browser = await launchBrowser()
}, 240_000)

afterAll(async () => {
  await browser?.close()
  await server?.stop()
})

describe('several tabs of one device', () => {
  it('when three tabs open at the same moment, then each refreshes in turn and nobody is signed out', async () => {
    const { context } = browser
    const refreshes: number[] = []
    context.on('response', (response) => {
      if (response.url().endsWith('/api/auth/refresh')) refreshes.push(response.status())
    })
    const first = await context.newPage()
    await first.goto(server.url)
    await first.waitForURL(/\/sign-in/)
    await first.locator('input[data-testid=email]').fill(splicer.email)
    await first.locator('input[data-testid=password]').fill(splicer.password)
    await first.locator('[data-testid=sign-in]').click()
    const cards = '[data-testid=closure-card]'
    await first.locator(cards).first().waitFor({ timeout: 30_000 })

    // Each start of the app refreshes; three starting together would present one cookie three times.
    const tabs = [first, await context.newPage(), await context.newPage()]
    refreshes.length = 0
    await Promise.all(tabs.map((tab) => (tab === first ? tab.reload() : tab.goto(server.url))))
    for (const tab of tabs) await tab.locator(cards).first().waitFor({ timeout: 30_000 })

    expect(refreshes.length).toBeGreaterThanOrEqual(3)
    expect(refreshes.every((status) => status === 200)).toBe(true)
    // The session is still whole: one more start refreshes again without a sign-in.
    await tabs[1]!.reload()
    await tabs[1]!.locator(cards).first().waitFor({ timeout: 30_000 })
    expect(tabs[1]!.url()).not.toMatch(/sign-in/)
    expect(refreshes.at(-1)).toBe(200)
  }, 180_000)
})

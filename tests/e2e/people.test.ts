import { readFileSync } from 'node:fs'
import { createRequire } from 'node:module'
import { join } from 'node:path'
import type { Page } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { demoUsers } from '#db/seed'
import { artifactsDir, launchBrowser, type Browser, signInAt } from './support/browser'
import { startServer, type RunningServer } from './support/server'

const axeSource = readFileSync(createRequire(import.meta.url).resolve('axe-core/axe.min.js'), 'utf8')
const office = demoUsers.find((u) => u.key === 'office')!
const splicer = demoUsers.find((u) => u.key === 'splicer')!

async function signIn(page: Page, url: string, user: { email: string; password: string }) {
  await signInAt(page, `${url}/sign-in`, user)
}

/** axe-core on the page as it is: the serious and critical violations, by rule. */
async function seriousViolations(page: Page): Promise<string[]> {
  // Evaluated through the debugging protocol: the app's CSP (rightly) refuses an injected inline script.
  await page.evaluate(axeSource)
  const result = (await page.evaluate(() =>
    (window as unknown as { axe: { run: (d: Document) => Promise<unknown> } }).axe.run(document),
  )) as { violations: { id: string; impact: string; nodes: { target: string[] }[] }[] }
  return result.violations
    .filter((v) => v.impact === 'serious' || v.impact === 'critical')
    .map((v) => `${v.id}: ${v.nodes.map((n) => n.target.join(' ')).join(', ')}`)
}

describe('office people and mailbox in Chromium', () => {
  let server: RunningServer
  let officeBrowser: Browser
  let splicerBrowser: Browser

  beforeAll(async () => {
    server = await startServer()
    officeBrowser = await launchBrowser({ viewport: { width: 1280, height: 800 } })
    splicerBrowser = await launchBrowser()
  }, 400_000)

  afterAll(async () => {
    await officeBrowser?.close()
    await splicerBrowser?.close()
    await server?.stop()
  })

  it('when the office disables a user, then that user is refused at once and the app says so', async () => {
    const crew = await splicerBrowser.context.newPage()
    let bearer = ''
    crew.on('request', (req) => {
      const header = req.headers()['authorization']
      if (header?.startsWith('Bearer ')) bearer = header
    })
    await signIn(crew, server.url, splicer)
    await crew.locator('[data-testid=closure-card]').first().waitFor({ timeout: 60_000 })

    const desk = await officeBrowser.context.newPage()
    await signIn(desk, server.url, office)
    await desk.locator('[data-testid=nav-people]').click()
    const row = desk.locator(`[data-testid="user-${splicer.email}"]`)
    await row.waitFor({ timeout: 60_000 })
    await desk.locator(`[data-testid="toggle-${splicer.email}"]`).click()
    await expect.poll(() => row.textContent(), { timeout: 30_000 }).toContain('disabled')

    // The splicer's next API call is refused: their still-valid access token no longer opens anything.
    expect(bearer).not.toBe('')
    const refused = await crew.request.get(`${server.url}/api/sync/pull`, {
      headers: { Authorization: bearer },
    })
    expect(refused.status()).toBe(401)
    expect((await refused.json()).error.code).toBe('unauthorized')
    await crew.reload()
    await crew.locator('[data-testid=session-ended]').waitFor({ timeout: 60_000 })
    await crew.locator('input[data-testid=password]').fill(splicer.password)
    await crew.locator('[data-testid=sign-in]').click()
    await expect
      .poll(() => crew.locator('[role=alert]').textContent(), { timeout: 30_000 })
      .toContain('do not match')
    await crew.screenshot({ path: join(artifactsDir, 'people-refused-phone-light.png'), fullPage: true })
  }, 300_000)

  it('when the office sends the production report, then the mailbox shows it and it opens', async () => {
    const desk = await officeBrowser.context.newPage()
    await desk.goto(`${server.url}/office/mailbox`)
    await desk.locator('[data-testid=send-report]').waitFor({ timeout: 60_000 })
    await desk.locator('input[type=date]').fill('2025-06-10')
    await desk.locator('[data-testid=send-report]').click()
    const item = desk.locator('[data-testid=mail-item]', { hasText: 'Production 2025-06-10' })
    await item.waitFor({ timeout: 60_000 })
    await item.click()
    await expect
      .poll(() => desk.locator('[data-testid=mail-open]').textContent(), { timeout: 30_000 })
      .toContain('Per splicer')
    expect(await desk.locator('[data-testid=mail-open]').textContent()).toContain('Maren Oduya')
  }, 300_000)

  it('when the office screens are checked, then axe finds nothing serious at both widths in light and dark', async () => {
    const problems: string[] = []
    for (const scheme of ['light', 'dark'] as const) {
      for (const viewport of [
        { width: 1280, height: 800, name: 'desktop' },
        { width: 390, height: 844, name: 'phone' },
      ]) {
        const b = await launchBrowser({ viewport, colorScheme: scheme })
        try {
          const page = await b.context.newPage()
          await signIn(page, server.url, office)
          await page.locator('[data-testid=nav-people]').waitFor({ timeout: 60_000 })
          for (const [name, path, ready] of [
            ['people', '/office/people', `[data-testid="user-${office.email}"]`],
            ['mailbox', '/office/mailbox', '[data-testid=mail-list]'],
          ] as const) {
            await page.goto(`${server.url}${path}`)
            await page.locator(ready).first().waitFor({ timeout: 60_000 })
            await page.screenshot({
              path: join(artifactsDir, `${name}-${viewport.name}-${scheme}.png`),
              fullPage: true,
            })
            problems.push(
              ...(await seriousViolations(page)).map((p) => `${name} ${viewport.name} ${scheme}: ${p}`),
            )
          }
        } finally {
          await b.close()
        }
      }
    }
    expect(problems).toEqual([])
  }, 600_000)
})

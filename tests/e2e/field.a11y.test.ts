import { type Page } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { expectNoSeriousA11y, describeViolations, seriousA11yViolations } from './support/a11y'
import { launchBrowser } from './support/browser'
import { startServer, type RunningServer } from './support/server'

const splicer = { email: 'maren.oduya@corvellford-fiber.test', password: 'splice-demo-1' }
const closureLabel = 'VLT-01 Weir Road'

/** Visits every field screen and collects axe's serious and critical findings per screen. */
async function auditScreens(page: Page, url: string, highContrast: boolean): Promise<string[]> {
  const problems: string[] = []
  const check = async (label: string) => {
    await page.waitForTimeout(400) // let transitions settle so colours are final
    const found = await seriousA11yViolations(page)
    if (found.length > 0) problems.push(`${label}:\n${describeViolations(found)}`)
  }
  await page.goto(url)
  await page.waitForURL(/\/sign-in/)
  await page.locator('input[data-testid=email]').waitFor()
  await check('sign-in')
  await page.locator('input[data-testid=email]').fill(splicer.email)
  await page.locator('input[data-testid=password]').fill(splicer.password)
  await page.locator('[data-testid=sign-in]').click()
  const card = page.locator(`[data-testid=closure-card][data-closure="${closureLabel}"]`)
  await card.waitFor({ timeout: 60_000 })
  if (highContrast) {
    await page.locator('[data-testid=settings]').click()
    await page.locator('[data-testid=high-contrast]').click()
    await check('settings')
    await page.keyboard.press('Escape')
    expect(await page.evaluate(() => document.body.classList.contains('ls-high-contrast'))).toBe(true)
  }
  await check('closures list')
  await card.click()
  await page.locator('[data-testid=cautions]').waitFor()
  await check('closure')
  await page.locator('[data-tray="1"]').click()
  await page.locator('li[data-state]').first().waitFor()
  await check('tray')
  await page.locator('li[data-state] button').first().click()
  await page.locator('.ls-panel').waitFor()
  await check('tray with the splice panel open')
  await page.getByRole('button', { name: 'Close' }).click()
  await page.locator('[data-testid=sync-indicator]').click()
  await page.locator('[data-testid=sync-details]').waitFor()
  await check('sync details')
  await page.keyboard.press('Escape')
  return problems
}

describe('the field screens and assistive technology (Chromium, axe-core)', () => {
  let server: RunningServer
  beforeAll(async () => {
    server = await startServer()
  })
  afterAll(async () => {
    await server?.stop()
  })

  for (const look of [
    { name: 'light', colorScheme: 'light', highContrast: false },
    { name: 'dark', colorScheme: 'dark', highContrast: false },
    { name: 'high contrast', colorScheme: 'light', highContrast: true },
  ] as const) {
    it(`when every field screen is shown in the ${look.name} theme, then axe finds nothing serious or critical`, async () => {
      const browser = await launchBrowser({
        colorScheme: look.colorScheme,
        viewport: { width: 360, height: 780 },
      })
      try {
        const page = await browser.context.newPage()
        const problems = await auditScreens(page, server.url, look.highContrast)
        expect(problems, problems.join('\n\n')).toEqual([])
      } finally {
        await browser.close()
      }
    })
  }

  it('when a screen has an unlabelled control, then the helper names it', async () => {
    const browser = await launchBrowser()
    try {
      const page = await browser.context.newPage()
      await page.setContent('<main><button><svg width="20" height="20"></svg></button></main>')
      await expect(expectNoSeriousA11y(page, 'a bare page')).rejects.toThrow(/button-name/)
    } finally {
      await browser.close()
    }
  })
})

import { mkdirSync, mkdtempSync, rmSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { type BrowserContext, chromium, type Page } from 'playwright-core'

/** Where screenshots go (git-ignored). */
export const artifactsDir = join(process.cwd(), 'tests', '.artifacts')

// Debian's Chromium, headless, with the flags this closed network needs (no background calls home).
const chromiumArgs = [
  '--no-sandbox',
  '--disable-gpu',
  '--disable-background-networking',
  '--disable-component-update',
  '--disable-sync',
  '--no-first-run',
  '--disable-quic',
]

export interface Browser {
  context: BrowserContext
  close: () => Promise<void>
}

/** A fresh Chromium profile at a phone-sized viewport unless told otherwise. */
export async function launchBrowser(
  options: {
    viewport?: { width: number; height: number }
    colorScheme?: 'light' | 'dark'
    /** A touch screen, as on a phone: taps come as touch events (page.touchscreen). */
    hasTouch?: boolean
  } = {},
): Promise<Browser> {
  const profile = mkdtempSync(join(tmpdir(), 'lightseam-chromium-'))
  mkdirSync(artifactsDir, { recursive: true })
  const context = await chromium.launchPersistentContext(profile, {
    executablePath: process.env.CHROMIUM_PATH ?? '/usr/bin/chromium',
    headless: true,
    args: chromiumArgs,
    viewport: options.viewport ?? { width: 390, height: 844 },
    deviceScaleFactor: 1,
    hasTouch: options.hasTouch ?? false,
    colorScheme: options.colorScheme ?? 'light',
    serviceWorkers: 'allow',
  })
  return {
    context,
    async close() {
      await context.close()
      rmSync(profile, { recursive: true, force: true })
    },
  }
}

/** Opens `url`, which the app sends to its sign-in screen, and signs in there with the person's email and password. */
export async function signInAt(page: Page, url: string, user: { email: string; password: string }) {
  await page.goto(url)
  await page.waitForURL(/\/sign-in/)
  await page.locator('input[data-testid=email]').fill(user.email)
  await page.locator('input[data-testid=password]').fill(user.password)
  await page.locator('[data-testid=sign-in]').click()
}

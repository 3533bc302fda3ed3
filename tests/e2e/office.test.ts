import { readFileSync } from 'node:fs'
import { join } from 'node:path'
import { type Page } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { PNG } from 'pngjs'
import { contrastRatio, parseRgb } from './support/a11y'
import { artifactsDir, launchBrowser, type Browser, signInAt } from './support/browser'
import { startServer, type RunningServer } from './support/server'

const office = { email: 'priya.halvorsen@corvellford-fiber.test', password: 'office-demo-1' }
const axeSource = readFileSync(join(process.cwd(), 'node_modules', 'axe-core', 'axe.min.js'), 'utf8')

async function axe(page: Page, screen: string) {
  // The app's CSP refuses inline scripts; evaluate runs outside it.
  await page.evaluate(axeSource)
  const violations = await page.evaluate(async () => {
    const result = await (
      window as unknown as {
        axe: { run: () => Promise<{ violations: { id: string; impact: string; nodes: unknown[] }[] }> }
      }
    ).axe.run()
    return result.violations.map((v) => ({ id: v.id, impact: v.impact, nodes: v.nodes.length }))
  })
  const bad = violations.filter((v) => v.impact === 'serious' || v.impact === 'critical')
  expect(bad, `${screen}: ${JSON.stringify(bad)}`).toEqual([])
}

async function signIn(page: Page, url: string) {
  await signInAt(page, url, office)
  await page.locator('[data-testid=nav-office]').waitFor({ timeout: 60_000 })
}

describe('the office sets a project up (Chromium, desktop)', () => {
  let server: RunningServer
  let browser: Browser
  let token: string

  async function apiGet(path: string) {
    const res = await fetch(`${server.url}${path}`, { headers: { Authorization: `Bearer ${token}` } })
    expect(res.status).toBe(200)
    return (await res.json()) as { items: Record<string, unknown>[]; total: number }
  }

  beforeAll(async () => {
    server = await startServer()
    browser = await launchBrowser({ viewport: { width: 1280, height: 800 } })
    const res = await fetch(`${server.url}/api/auth/sign-in`, {
      method: 'POST',
      headers: { 'content-type': 'application/json' },
      body: JSON.stringify(office),
    })
    token = ((await res.json()) as { accessToken: string }).accessToken
  }, 300_000)

  afterAll(async () => {
    await browser?.close()
    await server?.stop()
  })

  const screens: Record<string, string> = {}

  it('when the office creates a project, cable, closure and tray and uploads a plan, then only the valid file is saved', async () => {
    const page = await browser.context.newPage()
    await signIn(page, `${server.url}/office`)
    await page.locator('[data-testid=nav-office]').click()
    await page.locator('[data-testid=project-form]').waitFor()
    screens.projects = page.url()
    // Defaults come with their sources.
    expect(await page.locator('[data-testid=project-form]').textContent()).toContain('ANSI/TIA-568.3-D')

    await page.locator('input[data-testid=project-code]').fill('TST-02')
    await page.locator('input[data-testid=project-name]').fill('Corvell Ford test spur')
    await page.locator('[data-testid=project-save]').click()
    await page.waitForURL(/\/office\/projects\/[0-9a-f-]{36}$/)
    const projectId = page.url().split('/').pop()!
    screens.project = page.url()

    // A cable; the preview follows the form.
    await page.locator('[data-testid=new-cable]').click()
    await page.locator('[data-testid=cable-form]').waitFor()
    await page.locator('input[data-testid=cable-label]').fill('SPR-F24-01')
    await page.locator('input[data-testid=cable-fibers]').fill('24')
    await page.locator('input[data-testid=cable-per-unit]').fill('6')
    await expect.poll(() => page.locator('[data-testid=cable-preview] [data-unit]').count()).toBe(4)
    expect(await page.locator('[data-unit=t4] [aria-label^="Tube"]').getAttribute('aria-label')).toBe(
      'Tube 4: brown',
    )
    await page.locator('input[data-testid=cable-length]').fill('850')
    screens.cable = page.url()
    await page.locator('[data-testid=cable-save]').click()
    await page.locator('[data-cable="SPR-F24-01"]').waitFor()

    // A closure with a tray.
    await page.locator('[data-testid=new-closure]').click()
    await page.locator('input[data-testid=closure-label]').fill('HH-90 Spur End')
    await page.locator('input[data-testid=closure-position]').fill('640')
    await page.locator('[data-testid=closure-save]').click()
    await page.locator('[data-testid=open-plan]').waitFor()
    const closureId = page.url().split('/').pop()!
    screens.closure = page.url()
    await page.locator('input[data-testid=tray-capacity]').fill('12')
    await page.locator('[data-testid=tray-add]').click()
    await page.locator('[data-tray-row="1"]').waitFor()

    // A plan with problems on rows 3, 4 and 5: nothing is saved.
    await page.locator('[data-testid=open-plan]').click()
    await page.locator('[data-testid=plan-title]').waitFor()
    screens.plan = page.url()
    const header = 'tray,slot,cable_a,fiber_a,cable_b,fiber_b'
    const bad = [
      header,
      '1,1,SPR-F24-01,1,SPR-F24-01,13',
      '2,2,SPR-F24-01,2,SPR-F24-01,14',
      '1,3,SPR-F24-01,x,SPR-F24-01,15',
      '1,4,NO-SUCH,4,SPR-F24-01,99',
    ].join('\n')
    await page
      .locator('[data-testid=plan-file]')
      .setInputFiles({ name: 'plan.csv', mimeType: 'text/csv', buffer: Buffer.from(bad) })
    await page.locator('[data-testid=plan-upload]').click()
    await page.locator('[data-testid=plan-problems]').waitFor()
    const shown = await page
      .locator('[data-testid=plan-problem]')
      .evaluateAll((rows) =>
        rows.map((r) => `${(r as HTMLElement).dataset.row}:${(r as HTMLElement).dataset.field}`),
      )
    expect(shown).toContain('3:tray')
    expect(shown).toContain('4:fiber_a')
    expect(shown).toContain('5:cable_a')
    expect(shown.some((s) => s.startsWith('2:'))).toBe(false)
    await page.screenshot({
      path: join(artifactsDir, 'office-plan-problems-desktop-light.png'),
      fullPage: true,
    })
    expect((await apiGet(`/api/closures/${closureId}/plan`)).total).toBe(0)

    const good = [
      header,
      '1,1,SPR-F24-01,1,SPR-F24-01,13',
      '1,2,SPR-F24-01,2,SPR-F24-01,14',
      '1,3,SPR-F24-01,3,SPR-F24-01,15',
    ].join('\n')
    await page
      .locator('[data-testid=plan-file]')
      .setInputFiles({ name: 'plan.csv', mimeType: 'text/csv', buffer: Buffer.from(good) })
    await page.locator('[data-testid=plan-upload]').click()
    await page.locator('[data-testid=plan-uploaded]').waitFor()
    const plan = await apiGet(`/api/closures/${closureId}/plan`)
    expect(plan.total).toBe(3)
    expect(plan.items.map((r) => [r.slot, r.fiberA, r.fiberB])).toEqual([
      [1, 1, 13],
      [2, 2, 14],
      [3, 3, 15],
    ])
    await expect.poll(() => page.locator('[data-plan-row]').count()).toBe(3)

    // The closure's history shows its creation and the plan applied.
    await page.goto(`${server.url}/office/audit/closure/${closureId}`)
    await page.locator('[data-testid=audit-table] tbody tr').first().waitFor()
    const audit = await page.locator('[data-testid=audit-table]').textContent()
    expect(audit).toContain('created')
    expect(audit).toContain('Priya')
    screens.audit = page.url()
    expect(projectId).toMatch(/[0-9a-f-]{36}/)
    await page.close()
  }, 300_000)

  it('when the office opens the seeded project board, then it sorts, filters and pages on the server', async () => {
    const page = await browser.context.newPage()
    await page.goto(`${server.url}/office`)
    await page.locator('[data-project="CVF-FTTH-01"]').waitFor({ timeout: 60_000 })
    await page.locator('[data-project="CVF-FTTH-01"] >> text=Board').click()
    await page.locator('[data-testid=board-table] tbody tr').first().waitFor()
    await page.locator('[data-testid=completion-chart]').waitFor()
    screens.board = page.url()
    const projectId = page.url().split('/').slice(-2)[0]!
    const all = await apiGet(`/api/projects/${projectId}/board?limit=500`)
    const labels = () => page.locator('[data-testid=board-table] tbody tr td:first-child').allTextContents()
    const sorted = all.items.map((i) => String(i.label)).sort()

    // Page size 5, first page then second.
    await page.locator('[data-testid=board-table] .q-table__bottom .q-select').click()
    await page.locator('.q-menu .q-item >> text="5"').click()
    await expect.poll(async () => (await labels()).map((l) => l.trim())).toEqual(sorted.slice(0, 5))
    await page.locator('[data-testid=board-table] .q-table__bottom button[aria-label="Next page"]').click()
    await expect.poll(async () => (await labels()).map((l) => l.trim())).toEqual(sorted.slice(5, 10))

    // Sort by label descending.
    await page.locator('[data-testid=board-table] th >> text=Closure').click()
    await expect
      .poll(async () => (await labels()).map((l) => l.trim()))
      .toEqual([...sorted].reverse().slice(0, 5))

    // Filter by text.
    const pick = sorted[0]!.slice(0, 6)
    await page.locator('input[data-testid=board-search]').fill(pick)
    const matching = sorted.filter((l) => l.toLowerCase().includes(pick.toLowerCase()))
    await expect.poll(async () => (await labels()).length).toBe(Math.min(5, matching.length))
    await page.close()
  }, 300_000)

  it('when each office screen is looked at, then axe finds nothing serious at desktop and phone, light and dark', async () => {
    const variants = [
      { name: 'desktop-light', viewport: { width: 1280, height: 800 }, colorScheme: 'light' as const },
      { name: 'desktop-dark', viewport: { width: 1280, height: 800 }, colorScheme: 'dark' as const },
      { name: 'phone-light', viewport: { width: 390, height: 844 }, colorScheme: 'light' as const },
      { name: 'phone-dark', viewport: { width: 390, height: 844 }, colorScheme: 'dark' as const },
    ]
    for (const variant of variants) {
      const own = await launchBrowser({ viewport: variant.viewport, colorScheme: variant.colorScheme })
      try {
        const page = await own.context.newPage()
        await signIn(page, `${server.url}/office`)
        for (const [screen, url] of Object.entries(screens)) {
          await page.goto(url)
          await page.locator('main, .q-page').first().waitFor()
          await page.waitForLoadState('networkidle')
          await page.waitForTimeout(300)
          await page.screenshot({
            path: join(artifactsDir, `office-${screen}-${variant.name}.png`),
            fullPage: true,
          })
          await page.setViewportSize(variant.viewport)
          await axe(page, `${screen} ${variant.name}`)
        }
      } finally {
        await own.close()
      }
    }
  }, 600_000)

  it('when a filled button is hovered or focused from the keyboard, then its words keep 4.5:1 against it', async () => {
    for (const colorScheme of ['light', 'dark'] as const) {
      const own = await launchBrowser({ viewport: { width: 1280, height: 800 }, colorScheme })
      try {
        const page = await own.context.newPage()
        await page.goto(`${server.url}/sign-in`)
        const button = page.locator('[data-testid=sign-in]')
        await button.waitFor()
        const label = parseRgb(await button.evaluate((el) => getComputedStyle(el).color))
        // A point of the button's left padding, clear of the label and of the rounded corners, once
        // Quasar's tint has faded in (0.4 s).
        const fill = async () => {
          await page.waitForTimeout(800)
          const shot = PNG.sync.read(await button.screenshot())
          const at = (Math.floor(shot.height / 2) * shot.width + 8) * 4
          return [shot.data[at]!, shot.data[at + 1]!, shot.data[at + 2]!] as const
        }
        const resting = await fill()
        await button.hover()
        const hovered = await fill()
        await page.mouse.move(0, 0)
        await button.focus()
        const focused = await fill()
        const ratios = [resting, hovered, focused].map((c) => Number(contrastRatio(c, label).toFixed(2)))
        expect(
          ratios.every((r) => r >= 4.5),
          `${colorScheme}: resting, hovered, focused ${ratios}`,
        ).toBe(true)
        // The tint is there at all: hovering and focusing change the fill.
        expect(hovered).not.toEqual(resting)
        expect(focused).not.toEqual(resting)
      } finally {
        await own.close()
      }
    }
  }, 120_000)
})

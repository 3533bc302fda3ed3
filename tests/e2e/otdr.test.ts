import { createHash } from 'node:crypto'
import { readFileSync } from 'node:fs'
import { join } from 'node:path'
import { type Page } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { expectNoSeriousA11y } from './support/a11y'
import { artifactsDir, launchBrowser, type Browser, signInAt } from './support/browser'
import { startServer, type RunningServer } from './support/server'

const office = { email: 'priya.halvorsen@corvellford-fiber.test', password: 'office-demo-1' }
const header =
  'cable,fiber,from_end,wavelength_nm,fiber_length_m,end_to_end_db,distance_m,loss_db,reflectance_db,kind'
const cable = 'TR-864-A Hub to Weir Road'
// TR-864-A fiber 1 → VLT-01 (1240 m from the hub) → TR-864-B fiber 1, 1636 m in all. From B the vault splice is at
// 1636 − 1240 = 396 m (REFERENCE.md §3); 0.20 and 0.10 average 0.15 (REFERENCE.md §3, published worked example).
const rows = [
  `${cable},1,A,1550,1636,0.9,0,0.3,-50,connector`,
  `${cable},1,A,1550,1636,0.9,1243,0.2,,splice`,
  `${cable},1,A,1550,1636,0.9,1636,,-14,end`,
  `${cable},1,B,1550,1636,0.95,396.5,0.1,,splice`,
]
const badFile = [header, rows[0], rows[1]!.replace(',A,', ',C,'), rows[2], rows[3], ''].join('\n')
const goodFile = [header, ...rows, ''].join('\n')

async function signIn(page: Page, url: string) {
  await signInAt(page, url, office)
  await page.locator('[data-testid=nav-office]').waitFor({ timeout: 60_000 })
}

async function shoot(page: Page, name: string) {
  // The pointer rests off the buttons and nothing keeps focus, so a hover or focus tint is not what gets checked.
  await page.mouse.move(1, 1)
  await page.evaluate(() => (document.activeElement as HTMLElement | null)?.blur())
  // A field's message fades in; axe reads colours, so it waits for the fade to end.
  await page.waitForTimeout(600)
  await page.setViewportSize({ width: 360, height: 780 })
  await page.screenshot({ path: join(artifactsDir, `${name}-phone-light.png`), fullPage: true })
  await expectNoSeriousA11y(page, `${name} (phone)`)
  await page.setViewportSize({ width: 1280, height: 800 })
  await page.screenshot({ path: join(artifactsDir, `${name}-desktop-light.png`), fullPage: true })
  await expectNoSeriousA11y(page, `${name} (desktop)`)
}

/** Picks an option of a q-select; the list may still be loading, in which case the menu opens empty and is tried again. */
async function choose(page: Page, select: string, option: string) {
  const item = page.getByRole('option', { name: option })
  for (let attempt = 0; attempt < 10; attempt += 1) {
    await page.locator(`[data-testid=${select}]`).click()
    try {
      await item.waitFor({ timeout: 2_000 })
      await item.click()
      return
    } catch {
      await page.keyboard.press('Escape')
    }
  }
  throw new Error(`no option "${option}" in ${select}`)
}

describe('the office reconciles OTDR results (Chromium)', () => {
  let server: RunningServer
  let browser: Browser
  let token: string
  let projectId: string

  async function apiGet<T>(path: string): Promise<T> {
    const res = await fetch(`${server.url}${path}`, { headers: { Authorization: `Bearer ${token}` } })
    expect(res.status).toBe(200)
    return (await res.json()) as T
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
    projectId = (await apiGet<{ items: { id: string }[] }>('/api/projects')).items[0]!.id
  }, 300_000)

  afterAll(async () => {
    await browser?.close()
    await server?.stop()
  })

  it('when a file with a bad row is imported, then its row is shown and nothing saved; fixed, it imports and the vault shows the measured values; the fiber path shows the budget', async () => {
    const page = await browser.context.newPage()
    await signIn(page, `${server.url}/office/projects/${projectId}`)
    await page.locator('[data-testid=open-otdr-import]').click()
    await page.waitForURL(/\/otdr$/)
    const closures = await apiGet<{ items: { id: string; label: string }[] }>(
      `/api/projects/${projectId}/closures?limit=500`,
    )
    const vault = closures.items.find((c) => c.label === 'VLT-01 Weir Road')!
    type Recon = { splices: { fiberA: number; cableA: string; measured: unknown[] }[] }
    const measuredOnFiber1 = async () =>
      (await apiGet<Recon>(`/api/closures/${vault.id}/reconciliation`)).splices.find(
        (s) => s.cableA === cable && s.fiberA === 1,
      )!.measured

    // A bad row: its file, row number and column are shown, and nothing is saved.
    await page
      .locator('[data-testid=otdr-files]')
      .setInputFiles([{ name: 'vault-f1.csv', mimeType: 'text/csv', buffer: Buffer.from(badFile) }])
    await page.locator('[data-testid=otdr-chosen]').waitFor()
    await page.locator('[data-testid=otdr-import]').click()
    const problem = page.locator('[data-testid=otdr-problem]')
    await problem.first().waitFor()
    expect(await problem.count()).toBe(1)
    expect(await problem.first().getAttribute('data-row')).toBe('3')
    expect(await problem.first().getAttribute('data-field')).toBe('from_end')
    expect(await problem.first().textContent()).toContain('vault-f1.csv')
    expect(await page.locator('[data-testid=form-problem]').textContent()).toContain('nothing was imported')
    await shoot(page, 'otdr-import-problem')
    expect(await measuredOnFiber1()).toEqual([])

    // Fixed, it imports; the same bytes again change nothing.
    await page
      .locator('[data-testid=otdr-files]')
      .setInputFiles([{ name: 'vault-f1.csv', mimeType: 'text/csv', buffer: Buffer.from(goodFile) }])
    await page.locator('[data-testid=otdr-import]').click()
    await page.locator('[data-testid=otdr-file-result][data-status=imported]').waitFor()
    expect(await page.locator('[data-testid=otdr-problem]').count()).toBe(0)
    expect(await measuredOnFiber1()).toHaveLength(1)
    await page.locator('[data-testid=otdr-import]').click()
    await page.locator('[data-testid=otdr-file-result][data-status=unchanged]').waitFor()
    expect(await page.locator('[data-testid=otdr-file-result]').textContent()).toContain('nothing changed')
    await shoot(page, 'otdr-import-done')

    // The vault's reconciliation: both directions, their average, the flag and the untested wavelength.
    await page.locator('[data-testid=otdr-open-reconciliation]').click()
    await page.waitForURL(/\/reconciliation/)
    await choose(page, 'recon-closure', 'VLT-01 Weir Road')
    await page.locator('[data-testid=recon-title]').waitFor()
    const splice = page.locator('[data-testid=recon-splice][data-fiber-a="1"]').filter({ hasText: cable })
    const at1550 = splice.locator('[data-testid=recon-measured][data-wavelength="1550"]')
    await at1550.waitFor()
    expect(await at1550.locator('[data-testid=recon-ab]').textContent()).toContain('0.200 dB')
    expect(await at1550.locator('[data-testid=recon-ba]').textContent()).toContain('0.100 dB')
    expect(await at1550.locator('[data-testid=recon-average]').textContent()).toContain('0.150 dB')
    expect(
      await splice
        .locator('[data-testid=recon-flag]')
        .evaluateAll((els) => els.map((e) => (e as HTMLElement).dataset.flag)),
    ).toContain('measured_over_target')
    expect(await splice.locator('[data-testid=recon-untested]').textContent()).toContain('1310 nm')
    // The demo's own shots of ribbon 2 show beside it, with their bend placed between the hub and the vault.
    expect(await page.locator('[data-testid=recon-unmatched-event]').count()).toBeGreaterThanOrEqual(2)
    await shoot(page, 'otdr-reconciliation-vault')
    // Narrowed to the measured splices: fiber 1 here and the demo's ribbon 2 (fibers 13–24).
    await page.locator('[data-testid=recon-only-measured]').click()
    await expect.poll(() => page.locator('[data-testid=recon-splice]').count()).toBe(13)

    // The fiber path through the vault: the measured splice, the connector at the hub, the dead end at HH-02.
    await page.goto(`${server.url}/office/projects/${projectId}`)
    await page.locator('[data-testid=open-fiber-path]').click()
    await page.waitForURL(/\/fiber-path/)
    await choose(page, 'path-cable', `${cable} (864 fibers)`)
    await page.locator('input[data-testid=path-fiber]').fill('1')
    await page.locator('[data-testid=path-trace]').click()
    await page.locator('[data-testid=fiber-path]').waitFor()
    const steps = await page
      .locator('[data-testid=path-step]')
      .evaluateAll((els) => els.map((e) => (e as HTMLElement).dataset.kind))
    expect(steps).toEqual(['end', 'segment', 'splice', 'segment', 'end'])
    const spliceStep = page.locator('[data-testid=path-step][data-kind=splice]')
    expect(await spliceStep.textContent()).toContain('VLT-01 Weir Road')
    expect(
      await spliceStep.locator('[data-testid=path-splice-loss][data-source=measured]').textContent(),
    ).toContain('1550 nm: 0.150 dB')
    expect(await page.locator('[data-testid=path-steps]').textContent()).toContain(
      'Dead end at HH-02 Tannery Row',
    )
    const budget = page.locator('[data-testid=path-budget-row][data-wavelength="1550"]')
    // 0.9 from A and 0.95 from B average 0.925 dB end to end.
    expect(await budget.locator('[data-testid=path-measured]').textContent()).toContain('0.925 dB')
    expect(await budget.locator('[data-testid=path-measured-verdict]').textContent()).toMatch(/Pass|Fail/)
    await shoot(page, 'otdr-fiber-path')

    // The loss budget: a refused value stays in its box with the reason and nothing is saved; a good one is.
    await page.goto(`${server.url}/office/projects/${projectId}/loss-budget`)
    const connector = page.locator('input[data-testid=budget-connector]')
    await connector.waitFor()
    await connector.fill('-1')
    await page.locator('[data-testid=budget-save]').click()
    await page.locator('[data-testid=loss-budget-form] [data-testid=form-problem]').waitFor()
    expect(await connector.inputValue()).toBe('-1')
    type Budget = { settings: { connectorPairLossDb: number | null } }
    expect(
      (await apiGet<Budget>(`/api/projects/${projectId}/loss-budget`)).settings.connectorPairLossDb,
    ).toBeNull()
    await shoot(page, 'otdr-loss-budget-problem')
    await connector.fill('0.5')
    await page.locator('[data-testid=budget-save]').click()
    await expect
      .poll(
        async () =>
          (await apiGet<Budget>(`/api/projects/${projectId}/loss-budget`)).settings.connectorPairLossDb,
      )
      .toBe(0.5)

    // Reports: a closure's splices as CSV arrive as a download; the production report goes out on demand.
    await page.goto(`${server.url}/office/projects/${projectId}`)
    await page.locator('[data-testid=open-reports]').click()
    await page.waitForURL(/\/reports$/)
    await choose(page, 'report-closure', 'VLT-01 Weir Road')
    const [file] = await Promise.all([
      page.waitForEvent('download'),
      page.locator('[data-testid=report-closure-csv]').click(),
    ])
    expect(file.suggestedFilename()).toMatch(/^splices-VLT-01.*\.csv$/)
    // A closure not signed off has one close-out, rendered now; a signed-off one hands out the copy stored
    // at its sign-off (the same bytes each time) and offers one rendered as of now beside it.
    expect(await page.locator('[data-testid=report-close-out-fresh]').count()).toBe(0)
    await choose(page, 'report-closure', 'BLD-04 Old Maltings')
    const closeOut = async (testId: string) => {
      const [pdf] = await Promise.all([
        page.waitForEvent('download'),
        page.locator(`[data-testid=${testId}]`).click(),
      ])
      expect(pdf.suggestedFilename()).toBe('close-out-BLD-04-Old-Maltings.pdf')
      const bytes = readFileSync((await pdf.path())!)
      expect(bytes.subarray(0, 5).toString()).toBe('%PDF-')
      return createHash('sha256').update(bytes).digest('hex')
    }
    const stored = await closeOut('report-close-out')
    expect(await closeOut('report-close-out')).toBe(stored)
    // The copy as of now carries the moment it was generated (to the millisecond), so its bytes differ.
    expect(await closeOut('report-close-out-fresh')).not.toBe(stored)
    await page.locator('input[data-testid=report-day]').fill('2025-06-10')
    await page.locator('[data-testid=report-send]').click()
    expect(await page.locator('[data-testid=report-done]').textContent()).toContain('2025-06-10')
    await shoot(page, 'otdr-reports')
  }, 240_000)

  it('when the screens are shown in the dark theme, then axe finds nothing serious at phone width', async () => {
    const dark = await launchBrowser({ colorScheme: 'dark' })
    try {
      const page = await dark.context.newPage()
      const closures = await apiGet<{ items: { id: string; label: string }[] }>(
        `/api/projects/${projectId}/closures?limit=500`,
      )
      const cables = await apiGet<{ items: { id: string; label: string }[] }>(
        `/api/projects/${projectId}/cables?limit=500`,
      )
      const vault = closures.items.find((c) => c.label === 'VLT-01 Weir Road')!
      const trunk = cables.items.find((c) => c.label === cable)!
      await signIn(page, `${server.url}/office/projects/${projectId}/reconciliation?closureId=${vault.id}`)
      const screens: [string, string, string][] = [
        ['otdr-import', `/office/projects/${projectId}/otdr`, 'otdr-files'],
        [
          'otdr-reconciliation',
          `/office/projects/${projectId}/reconciliation?closureId=${vault.id}`,
          'recon-splice',
        ],
        [
          'otdr-fiber-path',
          `/office/projects/${projectId}/fiber-path?cableId=${trunk.id}&fiber=13`,
          'path-budget',
        ],
        ['otdr-loss-budget', `/office/projects/${projectId}/loss-budget`, 'loss-budget-form'],
        ['otdr-reports', `/office/projects/${projectId}/reports`, 'report-board'],
      ]
      for (const [name, path, ready] of screens) {
        await page.goto(`${server.url}${path}`)
        await page.locator(`[data-testid=${ready}]`).first().waitFor({ timeout: 30_000 })
        await page.mouse.move(1, 1)
        await page.screenshot({ path: join(artifactsDir, `${name}-phone-dark.png`), fullPage: true })
        await expectNoSeriousA11y(page, `${name} (phone, dark)`)
      }
    } finally {
      await dark.close()
    }
  }, 240_000)
})

import type { Page } from 'playwright-core'
import { v7 as uuidv7 } from 'uuid'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { launchBrowser, type Browser, signInAt } from './support/browser'
import { apiAs, canvasJpeg, people, seriousViolations, sha256Hex, shot, type ApiUser } from './support/review'
import { startServer, type RunningServer } from './support/server'

interface ClosureItem {
  id: string
  label: string
  state: string
}
interface SpliceItem {
  id: string
  trayId: string
  slot: number
  reviewState: string | null
  reviewReason: string | null
}

let server: RunningServer
let browser: Browser
let office: ApiUser
let splicer: ApiUser
const closures = new Map<string, ClosureItem>()

const byLabel = (prefix: string) => [...closures.values()].find((c) => c.label.startsWith(prefix))!
const mutationOf = (seq: number, name: string, args: Record<string, unknown>) => ({
  seq,
  name,
  args,
  baseServerSeq: 0,
  clientTime: new Date().toISOString(),
})

async function signIn(page: Page, who: keyof typeof people) {
  await signInAt(page, server.url, people[who])
}

async function synced(page: Page) {
  await expect
    .poll(() => page.locator('[data-testid=sync-indicator]').getAttribute('data-state'), { timeout: 60_000 })
    .toBe('synced')
}

async function axeClean(page: Page, screen: string) {
  expect({ screen, violations: await seriousViolations(page) }).toEqual({ screen, violations: [] })
}

/** The splicer's phone took the photos PED-03's photo rules ask for: tray 1, the closed closure, slot 9. */
async function photographPedestal(page: Page) {
  const pedestal = byLabel('PED-03')
  const trays = (await splicer.call('GET', `/api/closures/${pedestal.id}/trays`)).body.items as {
    id: string
  }[]
  const splices = (await splicer.call('GET', `/api/splices?closureId=${pedestal.id}&limit=500`)).body
    .items as SpliceItem[]
  const targets = [
    { entity: 'tray', entityId: trays[0]!.id, colour: '#2e6f9e' },
    { entity: 'closure', entityId: pedestal.id, colour: '#5b7d3a' },
    { entity: 'splice', entityId: splices.find((s) => s.slot === 9)!.id, colour: '#9e5b2e' },
  ]
  const clientId = uuidv7()
  const mutations = []
  for (const [i, target] of targets.entries()) {
    const bytes = await canvasJpeg(page, target.colour)
    const sha256 = sha256Hex(bytes)
    expect((await splicer.call('PUT', `/api/photos/${sha256}`, bytes, 'image/jpeg')).status).toBe(201)
    mutations.push(
      mutationOf(i + 1, 'addPhotoLink', {
        id: uuidv7(),
        sha256,
        entity: target.entity,
        entityId: target.entityId,
      }),
    )
  }
  const pushed = await splicer.call('POST', '/api/sync/push', { clientId, schemaVersion: 1, mutations })
  expect(pushed.body.results.map((r: { status: string }) => r.status)).toEqual([
    'applied',
    'applied',
    'applied',
  ])
}

async function review(page: Page, slot: string, reason: string, verdict: 'accept' | 'send-back') {
  const item = page.locator(`[data-testid=review-item][data-slot="${slot}"]`)
  await item.locator('textarea[data-testid=review-reason]').fill(reason)
  await item.locator(`[data-testid=${verdict}]`).click()
  await expect
    .poll(() => item.getAttribute('data-review'))
    .toBe(verdict === 'accept' ? 'accepted' : 'sent_back')
}

beforeAll(async () => {
  server = await startServer()
  browser = await launchBrowser()
  office = await apiAs(server.url, 'office')
  splicer = await apiAs(server.url, 'splicer')
  const project = (await office.call('GET', '/api/projects')).body.items[0] as { id: string }
  for (const c of (await office.call('GET', `/api/projects/${project.id}/closures?limit=100`)).body
    .items as ClosureItem[])
    closures.set(c.id, c)
})

afterAll(async () => {
  await browser?.close()
  await server?.stop()
})

describe('the foreman (Chromium, phone)', () => {
  it('when the foreman reviews and signs off offline, then sync carries it and the office sees it signed off', async () => {
    const { context } = browser
    const page = await context.newPage()
    await photographPedestal(page)
    await signIn(page, 'foreman')
    await page.waitForFunction(() => document.documentElement.dataset.sw === 'registered', null, {
      timeout: 60_000,
    })
    await page.evaluate(async () => navigator.serviceWorker.ready)
    await page.locator('[data-testid=nav]').getByText('Crew board').click()
    const cards = page.locator('[data-testid=board-card]')
    await expect.poll(() => cards.count(), { timeout: 60_000 }).toBe(4)
    await synced(page)
    expect(await page.evaluate(() => document.documentElement.scrollWidth)).toBeLessThanOrEqual(390)
    await shot(page, 'foreman-board-phone-light')
    await axeClean(page, 'crew board')

    // Filters: by state, and by splicer (names come from the crew list fetched while online).
    await page.locator('[data-testid=filter-state]').click()
    await page.getByRole('option', { name: 'Signed off' }).click()
    await expect.poll(() => cards.count()).toBe(1)
    await page.locator('[data-testid=filter-state]').click()
    await page.getByRole('option', { name: 'Every state' }).click()
    await page.locator('[data-testid=filter-splicer]').click()
    await page.getByRole('option', { name: 'Maren Oduya' }).click()
    await expect.poll(() => cards.count()).toBe(4)

    // Controlled by the worker, then the network goes.
    await page.reload()
    await cards.first().waitFor()
    await context.setOffline(true)
    const offline = await page.reload()
    expect(offline?.fromServiceWorker()).toBe(true)
    await page.locator('[data-testid=board-card][data-closure="HH-02 Tannery Row"]').click()
    await page.locator('[data-testid=review-item]').first().waitFor()
    await shot(page, 'foreman-review-phone-light')
    await axeClean(page, 'closure review')
    expect(await page.locator('[data-testid=rejected]').textContent()).toContain('Offline')
    await review(page, '4-10', 'Within the span budget; OTDR will confirm.', 'accept')
    await review(
      page,
      '4-24',
      'Fiber 108 spliced where the plan says 96: re-make with the right fiber.',
      'send-back',
    )
    expect(await page.locator('[data-check=flags_resolved]').getAttribute('data-ok')).toBe('false')

    await page.getByRole('link', { name: 'Crew board' }).first().click()
    await page.locator('[data-testid=board-card][data-closure="PED-03 Sloe Hill"]').click()
    await review(page, '1-9', 'Slightly over target at the pedestal; within the budget.', 'accept')
    await expect.poll(() => page.locator('[data-check=photos]').getAttribute('data-ok')).toBe('true')
    expect(await page.locator('[data-testid=checklist] [data-ok=false]').count()).toBe(0)
    await page.locator('[data-testid=signoff-note]').fill('Pedestal closed, dressed and photographed.')
    await shot(page, 'foreman-signoff-phone-light')
    await page.locator('[data-testid=sign-off]').click()
    await expect.poll(() => page.locator('[data-testid=review-state]').textContent()).toContain('Signed off')
    await expect
      .poll(() => page.locator('[data-testid=sync-indicator]').textContent())
      .toContain('Offline · 4 queued')

    await context.setOffline(false)
    await page.evaluate(() => window.dispatchEvent(new Event('online')))
    await synced(page)

    // The office sees the closure signed off and both verdicts with their reasons.
    const pedestal = byLabel('PED-03')
    const signed = await office.call('GET', `/api/closures/${pedestal.id}`)
    expect(signed.body.state).toBe('signed_off')
    const handhole = byLabel('HH-02')
    const splices = (await office.call('GET', `/api/splices?closureId=${handhole.id}&limit=500`)).body
      .items as SpliceItem[]
    const reviewed = splices.filter((s) => s.reviewState !== null).map((s) => [s.reviewState, s.reviewReason])
    expect(reviewed).toEqual(
      expect.arrayContaining([
        ['accepted', 'Within the span budget; OTDR will confirm.'],
        ['sent_back', 'Fiber 108 spliced where the plan says 96: re-make with the right fiber.'],
      ]),
    )

    // A splicer's change arriving after the sign-off is refused; the foreman applies it with one action.
    const late = await splicer.call('POST', '/api/sync/push', {
      clientId: uuidv7(),
      schemaVersion: 1,
      mutations: [
        mutationOf(1, 'addNote', {
          id: uuidv7(),
          entity: 'closure',
          entityId: pedestal.id,
          body: 'Spare loop coiled in the pedestal base.',
        }),
      ],
    })
    expect(late.body.results[0]).toMatchObject({ status: 'rejected', code: 'closure_locked' })
    await page.reload()
    const refused = page.locator('[data-testid=rejected-item]')
    await refused.waitFor({ timeout: 30_000 })
    await shot(page, 'foreman-rejected-phone-light')
    await refused.getByRole('button', { name: 'Apply this change' }).click()
    await expect.poll(() => refused.count()).toBe(0)
    const resolved = await office.call('GET', '/api/sync/rejected?state=resolved')
    expect(
      resolved.body.items.some((r: { name: string; closureId: string }) => r.closureId === pedestal.id),
    ).toBe(true)
    await expect
      .poll(() => page.locator('[data-testid=closure-notes]').textContent(), { timeout: 30_000 })
      .toContain('Spare loop coiled')

    // The day: production today, and Maren's order changed and saved.
    await page.goto(`${server.url}/crew/day`)
    const maren = page.locator('[data-testid=day-member][data-member="Maren Oduya"]')
    await maren.waitFor({ timeout: 30_000 })
    await page.locator('input[data-testid=production-day]').fill('2025-06-10')
    await page.locator('[data-testid=production]').getByText('Maren Oduya').waitFor({ timeout: 30_000 })
    await shot(page, 'foreman-day-phone-light')
    await axeClean(page, 'crew day')
    await maren.getByRole('button', { name: 'Move HH-02 Tannery Row earlier' }).click()
    await maren.locator('[data-testid=save-day]').click()
    await page.getByText('Day saved.').waitFor()
    const day = await office.call('GET', `/api/crews/${splicer.crewId}/day`)
    const order = day.body.members.find((m: { id: string }) => m.id === splicer.id).closures
    expect(order.map((c: { label: string }) => c.label).slice(0, 2)).toEqual([
      'HH-02 Tannery Row',
      'VLT-01 Weir Road',
    ])
    await page.close()

    // The splicer's tray shows the splice sent back, with the reason, ready to re-splice.
    const phone = await launchBrowser()
    try {
      const own = await phone.context.newPage()
      await signIn(own, 'splicer')
      await own
        .locator('[data-testid=closure-card][data-closure="HH-02 Tannery Row"]')
        .click({ timeout: 60_000 })
      await own.locator('[data-tray="4"]').click()
      const notice = own.locator('[data-testid=sent-back]')
      await notice.waitFor({ timeout: 30_000 })
      expect(await notice.textContent()).toContain('Fiber 108 spliced where the plan says 96')
      await shot(own, 'splicer-tray-sent-back-phone-light')
      await notice.locator('[data-slot="24"] button').click()
      await own.locator('[data-testid=current-splice]').waitFor()
    } finally {
      await phone.close()
    }
  })

  it('when the foreman works on a desktop in the dark, then the screens fit and pass axe', async () => {
    for (const [viewport, colorScheme, tag] of [
      [{ width: 1280, height: 800 }, 'dark', 'desktop-dark'],
      [{ width: 1280, height: 800 }, 'light', 'desktop-light'],
      [{ width: 390, height: 844 }, 'dark', 'phone-dark'],
    ] as const) {
      const wide = await launchBrowser({ viewport, colorScheme })
      try {
        const page = await wide.context.newPage()
        await signIn(page, 'foreman')
        await page.locator('[data-testid=nav]').getByText('Crew board').click()
        await page.locator('[data-testid=board-card]').first().waitFor({ timeout: 60_000 })
        await synced(page)
        await shot(page, `foreman-board-${tag}`)
        await axeClean(page, `board ${tag}`)
        await page.locator('[data-testid=board-card][data-closure="HH-02 Tannery Row"]').click()
        await page.locator('[data-testid=review-item]').first().waitFor()
        await shot(page, `foreman-review-${tag}`)
        await axeClean(page, `review ${tag}`)
        await page.goto(`${server.url}/crew/day`)
        await page.locator('[data-testid=day-member]').first().waitFor({ timeout: 30_000 })
        await shot(page, `foreman-day-${tag}`)
        await axeClean(page, `day ${tag}`)
      } finally {
        await wide.close()
      }
    }
  })
})

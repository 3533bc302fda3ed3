import type { Page } from 'playwright-core'
import { v7 as uuidv7 } from 'uuid'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { launchBrowser, signInAt } from './support/browser'
import { apiAs, people, seriousViolations, shot } from './support/review'
import { startServer, type RunningServer } from './support/server'

let server: RunningServer

beforeAll(async () => {
  server = await startServer()
})
afterAll(async () => {
  await server?.stop()
})

async function signInInspector(page: Page) {
  await signInAt(page, server.url, people.inspector)
}

/** Every control on the page that could change a record: inputs, text areas and non-navigation buttons. */
function writeControls(page: Page) {
  return page
    .locator('.q-page')
    .locator(
      'input, textarea, select, button, [data-testid=accept], [data-testid=send-back], [data-testid=sign-off], [data-testid=reopen]',
    )
}

describe('the inspector (Chromium)', () => {
  for (const [viewport, colorScheme, tag] of [
    [{ width: 390, height: 844 }, 'light', 'phone-light'],
    [{ width: 390, height: 844 }, 'dark', 'phone-dark'],
    [{ width: 1280, height: 800 }, 'light', 'desktop-light'],
    [{ width: 1280, height: 800 }, 'dark', 'desktop-dark'],
  ] as const) {
    it(`when the inspector opens the app (${tag}), then only signed-off closures show, read-only`, async () => {
      const browser = await launchBrowser({ viewport, colorScheme })
      try {
        const page = await browser.context.newPage()
        await signInInspector(page)
        await page.waitForURL(/\/inspect$/, { timeout: 60_000 })
        const cards = page.locator('[data-testid=board-card]')
        await cards.first().waitFor({ timeout: 60_000 })
        expect(await cards.count()).toBe(1)
        expect(await cards.first().getAttribute('data-closure')).toBe('BLD-04 Old Maltings')
        expect(await writeControls(page).count()).toBe(0)
        await shot(page, `inspector-list-${tag}`)
        expect(await seriousViolations(page)).toEqual([])

        await cards.first().click()
        await page.locator('[data-testid=record-title]').waitFor()
        await page.locator('[data-testid=record-splice]').first().waitFor()
        // Every attempt is on record: 24 slots, one of them re-spliced.
        expect(await page.locator('[data-testid=record-splice]').count()).toBe(25)
        expect(await page.locator('.ls-end').count()).toBeGreaterThan(0)
        expect(await page.getByText('Accepted by the foreman').count()).toBeGreaterThan(0)
        expect(await writeControls(page).count()).toBe(0)
        expect(await page.locator('[data-testid=sync-indicator]').count()).toBe(1)
        if (viewport.width < 400)
          expect(await page.evaluate(() => document.documentElement.scrollWidth)).toBeLessThanOrEqual(
            viewport.width,
          )
        await shot(page, `inspector-record-${tag}`)
        expect(await seriousViolations(page)).toEqual([])

        // The field and foreman screens are not theirs.
        await page.goto(`${server.url}/crew`)
        await page.getByText('Nothing here').waitFor()
      } finally {
        await browser.close()
      }
    })
  }

  it('when the inspector writes through the API, then every write is refused and nothing changes', async () => {
    const inspector = await apiAs(server.url, 'inspector')
    const office = await apiAs(server.url, 'office')
    const project = (await office.call('GET', '/api/projects')).body.items[0] as { id: string }
    const list = (await office.call('GET', `/api/projects/${project.id}/closures?limit=100`)).body.items as {
      id: string
      label: string
      state: string
      crewId: string
    }[]
    const signed = list.find((c) => c.state === 'signed_off')!
    const push = await inspector.call('POST', '/api/sync/push', {
      clientId: uuidv7(),
      schemaVersion: 1,
      mutations: [
        {
          seq: 1,
          name: 'reopenClosure',
          args: { closureId: signed.id, reason: 'Just looking.' },
          baseServerSeq: 0,
          clientTime: new Date().toISOString(),
        },
      ],
    })
    expect(push.status).toBe(403)
    expect((await inspector.call('PATCH', `/api/closures/${signed.id}`, { label: 'Renamed' })).status).toBe(
      403,
    )
    expect(
      (
        await inspector.call('PUT', `/api/crews/${signed.crewId}/day`, {
          userId: inspector.id,
          closureIds: [],
        })
      ).status,
    ).toBe(403)
    expect((await inspector.call('POST', '/api/sync/rejected/1/reapply', {})).status).toBe(403)
    expect(
      (
        await inspector.call(
          'PUT',
          `/api/photos/${'a'.repeat(64)}`,
          new Uint8Array([0xff, 0xd8]),
          'image/jpeg',
        )
      ).status,
    ).toBe(403)
    const after = await office.call('GET', `/api/closures/${signed.id}`)
    expect(after.body).toMatchObject({ state: 'signed_off', label: signed.label })
  })
})

import type { BrowserContext, Page } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { launchBrowser, type Browser, signInAt } from './support/browser'
import { apiAs, people } from './support/review'
import { startServer, type RunningServer } from './support/server'

// The built PWA under the server's own Content-Security-Policy (helmet, server/app.ts): every main screen
// of each role is walked with a `securitypolicyviolation` listener installed before any page script runs,
// and console lines mentioning the policy are collected too. Zero of either is the pass.

let server: RunningServer
let browser: Browser
const violations: string[] = []

/** Reports every CSP violation of every page of the context to `violations`, tagged with the screen. */
async function watch(context: BrowserContext, screen: () => string) {
  await context.exposeBinding('__lightseamCspViolation', (_source, text: string) => {
    violations.push(`${screen()}: ${text}`)
  })
  // Injected by the browser's protocol, not as a script element, so the policy under test does not block it.
  await context.addInitScript(() => {
    document.addEventListener('securitypolicyviolation', (e) => {
      const report = (window as unknown as { __lightseamCspViolation: (text: string) => void })
        .__lightseamCspViolation
      report(
        `${e.violatedDirective} blocked ${e.blockedURI || '(inline)'} at ${e.sourceFile}:${e.lineNumber}`,
      )
    })
  })
}

function watchConsole(page: Page, screen: () => string) {
  page.on('console', (message) => {
    if (/content security policy/i.test(message.text())) violations.push(`${screen()}: ${message.text()}`)
  })
}

async function signIn(page: Page, who: keyof typeof people) {
  await signInAt(page, server.url, people[who])
}

/** A fresh browser for one role, watched from its first page on. */
async function session(who: keyof typeof people) {
  const b = await launchBrowser({ viewport: { width: 1280, height: 800 } })
  let screen = `${who} sign-in`
  await watch(b.context, () => screen)
  const page = await b.context.newPage()
  watchConsole(page, () => screen)
  await signIn(page, who)
  return {
    page,
    at(name: string) {
      screen = `${who} ${name}`
    },
    close: () => b.close(),
  }
}

describe('the built app under its Content-Security-Policy (Chromium)', () => {
  beforeAll(async () => {
    server = await startServer()
    browser = await launchBrowser()
  }, 300_000)

  afterAll(async () => {
    await browser?.close()
    await server?.stop()
  })

  it('when the shell is served, then it carries the helmet policy: scripts from self only, no eval', async () => {
    const page = await browser.context.newPage()
    const response = await page.goto(server.url)
    const csp = response?.headers()['content-security-policy'] ?? ''
    const directives = Object.fromEntries(
      csp.split(';').map((d) => {
        const [name, ...values] = d.trim().split(/\s+/)
        return [name, values]
      }),
    )
    expect(directives['script-src']).toEqual(["'self'"])
    expect(directives['default-src']).toEqual(["'self'"])
    expect(directives['object-src']).toEqual(["'none'"])
    expect(directives['frame-ancestors']).toEqual(["'none'"])
    expect(csp).not.toContain('unsafe-eval')
    // The API answers carry it too.
    const api = await page.request.get(`${server.url}/api/health`)
    expect(api.headers()['content-security-policy']).toBe(csp)
  })

  it('when each role walks its main screens, then the browser reports no policy violation', async () => {
    // A canary first: a blocked inline script must be seen by the listener, or a silent pass proves nothing.
    const canary = await session('splicer')
    try {
      canary.at('canary')
      await canary.page.locator('[data-testid=closure-card]').first().waitFor({ timeout: 60_000 })
      await canary.page.evaluate(() => {
        const script = document.createElement('script')
        script.textContent = 'window.__inline = 1'
        document.body.append(script)
      })
      await expect
        .poll(() => violations.filter((v) => v.startsWith('splicer canary')).length)
        .toBeGreaterThan(0)
    } finally {
      await canary.close()
    }
    // Its console line may arrive after the event; both belong to the canary.
    await new Promise((resolve) => setTimeout(resolve, 500))
    violations.length = 0

    // Splicer: the closures list, a closure, a tray.
    const splicer = await session('splicer')
    try {
      const { page } = splicer
      splicer.at('closures')
      await page.locator('[data-testid=closure-card]').first().waitFor({ timeout: 60_000 })
      await page.waitForFunction(() => document.documentElement.dataset.sw === 'registered', null, {
        timeout: 60_000,
      })
      splicer.at('closure')
      await page.locator('[data-testid=closure-card]').first().click()
      await page.locator('[data-tray="1"]').waitFor({ timeout: 30_000 })
      splicer.at('tray')
      await page.locator('[data-tray="1"]').click()
      await page.locator('[data-testid=tray-title]').waitFor()
      await page.locator('li[data-slot]').first().waitFor()
      await page.waitForTimeout(500)
    } finally {
      await splicer.close()
    }

    // Office: projects, a project, its board, people, the mailbox.
    const officeApi = await apiAs(server.url, 'office')
    const projects = await officeApi.call('GET', '/api/projects')
    const projectId = (projects.body.items as { id: string }[])[0]!.id
    const office = await session('office')
    try {
      const { page } = office
      office.at('home')
      await page.locator('[data-testid=nav-office]').waitFor({ timeout: 60_000 })
      for (const [name, path, ready] of [
        ['projects', '/office', '[data-testid=project-list]'],
        ['project', `/office/projects/${projectId}`, '[data-testid=project-title]'],
        ['board', `/office/projects/${projectId}/board`, '[data-testid=board-table] tbody tr'],
        ['people', '/office/people', `[data-testid="user-${people.office.email}"]`],
        ['mailbox', '/office/mailbox', '[data-testid=mail-list]'],
      ] as const) {
        office.at(name)
        await page.goto(`${server.url}${path}`)
        await page.locator(ready).first().waitFor({ timeout: 60_000 })
        await page.waitForTimeout(300)
      }
    } finally {
      await office.close()
    }

    // Foreman: the crew board and one closure's review.
    const foreman = await session('foreman')
    try {
      const { page } = foreman
      foreman.at('board')
      await page.locator('[data-testid=nav]').getByText('Crew board').click({ timeout: 60_000 })
      await page.locator('[data-testid=board-card]').first().waitFor({ timeout: 60_000 })
      foreman.at('review')
      await page.locator('[data-testid=board-card]').first().click()
      await page.waitForURL(/\/crew\/review\//)
      await page.waitForTimeout(500)
    } finally {
      await foreman.close()
    }

    expect(violations).toEqual([])
  }, 300_000)
})

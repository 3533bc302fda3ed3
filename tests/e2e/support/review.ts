import { createHash } from 'node:crypto'
import { readFileSync } from 'node:fs'
import { join } from 'node:path'
import type { Page } from 'playwright-core'
import { artifactsDir } from './browser'

// Helpers of the foreman's and the inspector's browser tests: the API as a demo user, axe-core on a
// screen, and screenshots.

export const people = {
  splicer: { email: 'maren.oduya@corvellford-fiber.test', password: 'splice-demo-1' },
  foreman: { email: 'ines.barrowclough@corvellford-fiber.test', password: 'foreman-demo-1' },
  office: { email: 'priya.halvorsen@corvellford-fiber.test', password: 'office-demo-1' },
  inspector: { email: 'walt.emberley@corvellford-fiber.test', password: 'inspect-demo-1' },
}

export interface ApiUser {
  id: string
  crewId: string | null
  call: (
    method: string,
    path: string,
    body?: unknown,
    contentType?: string,
  ) => Promise<{ status: number; body: any }> // eslint-disable-line @typescript-eslint/no-explicit-any
}

/** Signs a demo user in over HTTP and returns a caller that sends their bearer token. */
export async function apiAs(base: string, who: keyof typeof people): Promise<ApiUser> {
  const res = await fetch(`${base}/api/auth/sign-in`, {
    method: 'POST',
    headers: { 'content-type': 'application/json' },
    body: JSON.stringify(people[who]),
  })
  const signed = (await res.json()) as { accessToken: string; user: { id: string; crewId: string | null } }
  return {
    id: signed.user.id,
    crewId: signed.user.crewId,
    async call(method, path, body, contentType = 'application/json') {
      const answer = await fetch(`${base}${path}`, {
        method,
        headers: {
          authorization: `Bearer ${signed.accessToken}`,
          ...(body === undefined ? {} : { 'content-type': contentType }),
        },
        body:
          body === undefined
            ? undefined
            : body instanceof Uint8Array
              ? Buffer.from(body)
              : JSON.stringify(body),
      })
      const text = await answer.text()
      let parsed: unknown = text
      try {
        parsed = JSON.parse(text)
      } catch {
        // Not JSON: kept as text.
      }
      return { status: answer.status, body: parsed }
    },
  }
}

/** A real JPEG drawn on a canvas in the page, so photos show as pictures in screenshots. */
export async function canvasJpeg(page: Page, colour: string): Promise<Uint8Array> {
  const bytes = await page.evaluate(async (fill) => {
    const canvas = document.createElement('canvas')
    canvas.width = 320
    canvas.height = 240
    const g = canvas.getContext('2d')!
    g.fillStyle = fill
    g.fillRect(0, 0, 320, 240)
    g.fillStyle = '#f2f2f2'
    g.fillRect(30, 90, 260, 24)
    const blob = await new Promise<Blob>((resolve) => canvas.toBlob((b) => resolve(b!), 'image/jpeg', 0.9))
    return Array.from(new Uint8Array(await blob.arrayBuffer()))
  }, colour)
  return new Uint8Array(bytes)
}

export const sha256Hex = (bytes: Uint8Array) => createHash('sha256').update(bytes).digest('hex')

interface AxeViolation {
  id: string
  impact: string | null
  nodes: { target: string[] }[]
}

let axeText: string | null = null
const axeSource = () =>
  (axeText ??= readFileSync(join(process.cwd(), 'node_modules/axe-core/axe.min.js'), 'utf8'))

/** Runs axe-core on the page and returns the serious and critical violations (id and first target). */
export async function seriousViolations(page: Page): Promise<string[]> {
  // Evaluated, not added as a script tag: the app's CSP (script-src 'self') blocks inline scripts.
  if (!(await page.evaluate(() => 'axe' in window))) await page.evaluate(axeSource())
  return page.evaluate(async () => {
    const axe = (
      window as unknown as { axe: { run: (ctx: unknown) => Promise<{ violations: AxeViolation[] }> } }
    ).axe
    const result = await axe.run(document)
    return result.violations
      .filter((v) => v.impact === 'serious' || v.impact === 'critical')
      .map(
        (v) =>
          `${v.id}: ${v.nodes
            .map((n) => n.target.join(' '))
            .slice(0, 3)
            .join(' | ')}`,
      )
  })
}

/** A screenshot into tests/.artifacts; dialogs and notifications are given time to settle first. */
export async function shot(page: Page, name: string) {
  await page.waitForTimeout(400)
  const size = page.viewportSize()!
  await page.screenshot({ path: join(artifactsDir, `${name}.png`), fullPage: true })
  await page.setViewportSize(size)
}

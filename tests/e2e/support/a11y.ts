import { readFileSync } from 'node:fs'
import { createRequire } from 'node:module'
import type { Page } from 'playwright-core'

// The app's Content-Security-Policy (script-src 'self') refuses an injected <script> tag, as it should;
// evaluating the source through the DevTools protocol runs it without loosening the page's policy.
const axeSource = readFileSync(createRequire(import.meta.url).resolve('axe-core/axe.min.js'), 'utf8')

interface AxeNode {
  target: unknown[]
  failureSummary?: string
  html: string
}
interface AxeViolation {
  id: string
  impact: 'minor' | 'moderate' | 'serious' | 'critical' | null
  help: string
  helpUrl: string
  nodes: AxeNode[]
}

/** Runs axe-core on the page as it is now and returns the serious and critical violations. */
export async function seriousA11yViolations(page: Page): Promise<AxeViolation[]> {
  if (!(await page.evaluate(() => 'axe' in window))) await page.evaluate(axeSource)
  const violations = await page.evaluate(async () => {
    const axe = (
      window as unknown as {
        axe: { run: (ctx: Document, opts: object) => Promise<{ violations: unknown[] }> }
      }
    ).axe
    const result = await axe.run(document, { resultTypes: ['violations'] })
    return result.violations
  })
  return (violations as AxeViolation[]).filter((v) => v.impact === 'serious' || v.impact === 'critical')
}

/** Reads like: `[serious] color-contrast: Elements must meet … (2) → .ls-chip: Fix any of …`. */
export function describeViolations(violations: AxeViolation[]): string {
  return violations
    .map((v) =>
      [
        `[${v.impact}] ${v.id}: ${v.help} (${v.nodes.length}) ${v.helpUrl}`,
        ...v.nodes
          .slice(0, 5)
          .map(
            (n) =>
              `    → ${n.target.join(' ')}: ${(n.failureSummary ?? '').replace(/\s+/g, ' ').slice(0, 300)}`,
          ),
      ].join('\n'),
    )
    .join('\n')
}

/** Fails with a readable list when the screen has any serious or critical accessibility violation. */
export async function expectNoSeriousA11y(page: Page, label: string): Promise<void> {
  const violations = await seriousA11yViolations(page)
  if (violations.length > 0)
    throw new Error(`Accessibility problems on ${label}:\n${describeViolations(violations)}`)
}

type Rgb = readonly [number, number, number]

/** Relative luminance of an sRGB colour (WCAG 2.2, "relative luminance"). */
function luminance([r, g, b]: Rgb): number {
  const linear = (v: number) => {
    const c = v / 255
    return c <= 0.04045 ? c / 12.92 : ((c + 0.055) / 1.055) ** 2.4
  }
  return 0.2126 * linear(r) + 0.7152 * linear(g) + 0.0722 * linear(b)
}

/** The contrast ratio of two colours, 1 to 21 (WCAG 2.2, "contrast ratio"; AA asks 4.5 for body text). */
export function contrastRatio(a: Rgb, b: Rgb): number {
  const [light, dark] = [luminance(a), luminance(b)].sort((x, y) => y - x) as [number, number]
  return (light + 0.05) / (dark + 0.05)
}

/** An `rgb(…)`/`rgba(…)` computed colour as [r, g, b]. */
export function parseRgb(css: string): Rgb {
  const [r, g, b] = (css.match(/\d+(\.\d+)?/g) ?? []).map(Number)
  if (r === undefined || g === undefined || b === undefined) throw new Error(`not an rgb colour: ${css}`)
  return [r, g, b]
}

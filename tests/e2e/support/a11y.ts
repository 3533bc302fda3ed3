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

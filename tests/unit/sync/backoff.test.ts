import fc from 'fast-check'
import { describe, expect, it } from 'vitest'
import { backoffDelayMs } from '@/sync/backoff'

describe('sync retry backoff (SYNC.md: 1 s → 5 min with jitter)', () => {
  it('when retries pile up, then the delay doubles from 1 s and stops growing at 5 min', () => {
    const mid = () => 0.5
    expect(backoffDelayMs(0, mid)).toBe(750)
    expect(backoffDelayMs(1, mid)).toBe(1500)
    expect(backoffDelayMs(20, () => 0.999999)).toBe(300_000)
  })

  it('always stays between half the step and the step, never past 5 min', () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 0, max: 1000 }),
        fc.double({ min: 0, max: 1, maxExcluded: true, noNaN: true }),
        (n, r) => {
          const step = Math.min(300_000, 1000 * 2 ** Math.min(n, 30))
          const delay = backoffDelayMs(n, () => r)
          expect(delay).toBeGreaterThanOrEqual(step / 2 - 1)
          expect(delay).toBeLessThanOrEqual(step)
        },
      ),
    )
  })
})

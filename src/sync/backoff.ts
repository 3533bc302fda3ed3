/** Retry delays for sync: exponential from 1 s to 5 min with full jitter, so many phones never retry in step. */
export interface BackoffOptions {
  baseMs?: number
  maxMs?: number
}

/** The delay before retry number `attempt` (0-based), drawn with `random` in [0, 1). */
export function backoffDelayMs(attempt: number, random: () => number, options: BackoffOptions = {}): number {
  const base = options.baseMs ?? 1_000
  const max = options.maxMs ?? 5 * 60_000
  const ceiling = Math.min(max, base * 2 ** Math.max(0, Math.min(attempt, 30)))
  // Half fixed, half random: never shorter than half the step, never longer than the step.
  return Math.round(ceiling / 2 + random() * (ceiling / 2))
}

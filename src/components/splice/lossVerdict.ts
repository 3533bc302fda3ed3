import { matCheckCircle, matError, matFlag, matRemove, matWarning } from '@quasar/extras/material-icons'
import { lossStatus } from '#shared/domain/acceptance'
import type { SpliceFlag, SpliceStatus } from '#shared/schemas/enums'
import type { LossLimit } from '#shared/schemas/project'

export type Tone = 'neutral' | 'ok' | 'info' | 'warn' | 'bad'
/** How a status is shown: a tone for colour, an icon and words, so colour never carries it alone. */
export type Verdict = { tone: Tone; icon: string; text: string }

/**
 * Writes a dB value with two or three decimals, a true minus sign and a no-break space before the
 * unit (a narrow status chip must not leave 'dB' on a line of its own): 0.03 → '0.03 dB'.
 */
export function formatDb(db: number): string {
  const text = db.toFixed(3).replace(/0$/, '')
  return (db < 0 && text !== '-0.00' ? text.replace('-', '−') : text.replace('-', '')) + '\u00a0dB'
}

export const statusIcons: Record<SpliceStatus, string> = {
  no_reading: matRemove,
  ok: matCheckCircle,
  over_target: matWarning,
  accepted_with_flag: matFlag,
  over_maximum: matError,
}

/** Judges a reading being typed (no accept reason yet) and words it as the loss pad shows it. */
export function readingVerdict(
  lossDb: number | null,
  limit: LossLimit,
  attempt: number,
  attemptsBeforeAcceptWithFlag: number,
): Verdict & { status: SpliceStatus } {
  const { status, flags } = lossStatus(
    lossDb,
    limit,
    { attempt, acceptReason: null },
    attemptsBeforeAcceptWithFlag,
  )
  return { status, ...wordReading(status, flags, limit, attempt, lossDb) }
}

function wordReading(
  status: SpliceStatus,
  flags: readonly SpliceFlag[],
  limit: LossLimit,
  attempt: number,
  lossDb: number | null,
): Verdict {
  const target = formatDb(limit.contractTargetDb)
  const icon = statusIcons[status]
  switch (status) {
    case 'no_reading':
      return { tone: 'neutral', icon, text: 'No reading yet' }
    case 'ok':
      return {
        tone: 'ok',
        icon,
        text: `On target (≤ ${target})${(lossDb ?? 0) < 0 ? ' · gainer reading' : ''}`,
      }
    case 'over_target':
      return {
        tone: 'warn',
        icon,
        text: flags.includes('attempts_exhausted')
          ? `Over target ${target} · attempt ${attempt}: re-splice, or accept with a reason`
          : `Over target ${target} · re-splice`,
      }
    case 'accepted_with_flag':
      return { tone: 'warn', icon, text: `Over target ${target} · accepted with a flag` }
    case 'over_maximum':
      return { tone: 'bad', icon, text: `Over maximum ${formatDb(limit.standardMaxDb)} · re-splice` }
  }
}

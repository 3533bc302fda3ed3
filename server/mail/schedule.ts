import { Cron } from 'croner'
import type { AppContext } from '../context'
import { archiveMissingCloseOuts } from '../services/closeOutArchive'
import { retryFailedMail, sendProductionReports } from '../services/mail'

export interface DailyReport {
  /** The croner job: `nextRun()` tells when it fires next, `trigger()` runs it now (tests). */
  job: Cron
  /** Resolves when the run started by the last tick has finished. */
  lastRun: () => Promise<unknown>
  stop: () => void
}

/** The UTC day a moment falls on in the report's time zone. */
export function dayIn(timezone: string, at: Date): string {
  return new Intl.DateTimeFormat('en-CA', {
    timeZone: timezone,
    year: 'numeric',
    month: '2-digit',
    day: '2-digit',
  }).format(at)
}

/**
 * Sends the production report every day at the configured time of day (config.mail.dailyReportAt, in
 * config.mail.timezone) for that day, stores the close-out reports of sign-offs that have none yet, and
 * retries sign-off messages that failed. `now` is the clock.
 */
export function startDailyReport(
  ctx: AppContext,
  options: { now?: () => Date; paused?: boolean } = {},
): DailyReport {
  const [hour, minute] = ctx.config.mail.dailyReportAt.split(':').map(Number) as [number, number]
  const now = options.now ?? (() => new Date())
  let running: Promise<unknown> = Promise.resolve()
  const job = new Cron(
    `0 ${minute} ${hour} * * *`,
    {
      timezone: ctx.config.mail.timezone,
      paused: options.paused ?? false,
      protect: true,
      name: 'daily-production-report',
    },
    () => {
      running = (async () => {
        const day = dayIn(ctx.config.mail.timezone, now())
        await sendProductionReports(ctx, day)
        await archiveMissingCloseOuts(ctx)
        await retryFailedMail(ctx, now())
      })().catch((error) => console.error('daily production report:', error))
      return running.then(() => undefined)
    },
  )
  return { job, lastRun: () => running, stop: () => job.stop() }
}

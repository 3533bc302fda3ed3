import { existsSync, readdirSync, readFileSync } from 'node:fs'
import { join } from 'node:path'
import { simpleParser, type ParsedMail } from 'mailparser'
import { startDailyReport } from '../../../server/mail/schedule'
import type { TestApp } from './app'

/** Every message the local fake SMTP server stored, parsed, oldest first (after the mailer's queue drained). */
export async function received(t: TestApp): Promise<ParsedMail[]> {
  await t.ctx.mailer.idle()
  const dir = t.config.mail.dir
  if (!existsSync(dir)) return []
  const files = readdirSync(dir)
    .filter((f) => f.endsWith('.eml'))
    .sort()
  return Promise.all(files.map((f) => simpleParser(readFileSync(join(dir, f)))))
}

/** Fires the daily job `times` times with its clock at `now`, each run finished before the next. */
export async function runDailyJob(t: TestApp, now: string, times = 1): Promise<void> {
  const daily = startDailyReport(t.ctx, { now: () => new Date(now), paused: true })
  try {
    for (let i = 0; i < times; i += 1) {
      await daily.job.trigger()
      await daily.lastRun()
    }
  } finally {
    daily.stop()
  }
}

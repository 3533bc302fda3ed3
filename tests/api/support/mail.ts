import { existsSync, readdirSync, readFileSync } from 'node:fs'
import { join } from 'node:path'
import { simpleParser, type ParsedMail } from 'mailparser'
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

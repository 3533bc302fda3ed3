import { createHash, randomBytes } from 'node:crypto'
import bcrypt from 'bcryptjs'
import { v7 as uuidv7 } from 'uuid'
import { writeTransaction } from '#db/client'
import {
  invitationCreateSchema,
  passwordResetRequestSchema,
  productionReportRequestSchema,
  tokenPasswordSchema,
} from '#shared/schemas/index'
import type { AppContext } from '../context'
import { AppError } from '../errors'
import type { OutgoingMail } from '../mail/mailer'
import type { Actor } from '../middleware/auth'
import { recordEvent } from '../repositories/audit'
import { closeOutData, closeOutFilename, systemActor } from './closeOut'
import { archiveCloseOut, storedCloseOutBytes } from './closeOutArchive'
import { createUser } from './people'
import { production } from './reports'

const sendAttempts = 2

const recipientsOf = (ctx: AppContext, roles: string[]) =>
  (
    ctx.database.sqlite
      .prepare(
        `SELECT email FROM users WHERE active = 1 AND role IN (${roles.map(() => '?').join(',')}) ORDER BY email`,
      )
      .all(...roles) as { email: string }[]
  ).map((u) => u.email)

/**
 * Sends one message for one event (kind + key) at most once, logging the outcome in mail_log; a failure is
 * retried once, then recorded as failed for `retryFailedMail`. Never throws.
 */
export async function sendLogged(
  ctx: AppContext,
  kind: string,
  key: string,
  build: () => Promise<OutgoingMail | null>,
): Promise<'sent' | 'failed' | 'skipped'> {
  const sqlite = ctx.database.sqlite
  const prior = sqlite
    .prepare('SELECT state, attempts FROM mail_log WHERE kind = ? AND key = ?')
    .get(kind, key) as { state: string; attempts: number } | undefined
  if (prior?.state === 'sent') return 'skipped'
  let mail: OutgoingMail | null
  try {
    mail = await build()
  } catch (error) {
    console.error(`mail ${kind} ${key}: could not be built`, error)
    mail = null
  }
  if (!mail || mail.to.length === 0) return 'skipped'
  let error: unknown = null
  let attempts = prior?.attempts ?? 0
  for (let i = 0; i < sendAttempts; i += 1) {
    attempts += 1
    try {
      await ctx.mailer.send(mail)
      error = null
      break
    } catch (e) {
      error = e
    }
  }
  const state = error ? 'failed' : 'sent'
  if (error) console.error(`mail ${kind} ${key}: not sent after ${attempts} attempts`, error)
  logMail(ctx, kind, key, mail, attempts, error)
  return state
}

/** Records the outcome of one event's message: sent when `error` is null, otherwise failed (to retry). */
function logMail(
  ctx: AppContext,
  kind: string,
  key: string,
  mail: Pick<OutgoingMail, 'to' | 'subject'>,
  attempts: number,
  error: unknown,
): void {
  const at = new Date().toISOString()
  ctx.database.sqlite
    .prepare(
      `INSERT INTO mail_log (kind, key, recipients, subject, state, attempts, error, created_at, sent_at)
       VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)
       ON CONFLICT (kind, key) DO UPDATE SET state = excluded.state, attempts = excluded.attempts,
         error = excluded.error, sent_at = excluded.sent_at`,
    )
    .run(
      kind,
      key,
      mail.to.join(', '),
      mail.subject,
      error ? 'failed' : 'sent',
      attempts,
      error ? String(error).slice(0, 500) : null,
      at,
      error ? null : at,
    )
}

/** The production report of one UTC day for one project, as plain text. */
export function productionReportText(ctx: AppContext, projectId: string, day: string) {
  const actor = systemActor(ctx)
  const project = ctx.database.sqlite
    .prepare('SELECT code, name FROM projects WHERE id = ?')
    .get(projectId) as {
    code: string
    name: string
  }
  const { items } = production(ctx, actor, projectId, { from: day })
  const crews = new Map(
    (ctx.database.sqlite.prepare('SELECT id, name FROM crews').all() as { id: string; name: string }[]).map(
      (c) => [c.id, c.name],
    ),
  )
  const completed = ctx.database.sqlite
    .prepare(
      `SELECT crew_id AS crewId, count(*) AS n FROM closures
        WHERE project_id = ? AND deleted = 0 AND state = 'signed_off' AND substr(signed_off_at, 1, 10) = ? GROUP BY crew_id`,
    )
    .all(projectId, day) as { crewId: string | null; n: number }[]
  const flagged = ctx.database.sqlite
    .prepare(
      `SELECT s.splicer_id AS splicerId, count(*) AS n FROM splices s JOIN closures c ON c.id = s.closure_id
        WHERE c.project_id = ? AND s.deleted = 0 AND s.flags != '[]' AND substr(s.spliced_at, 1, 10) = ? GROUP BY s.splicer_id`,
    )
    .all(projectId, day) as { splicerId: string; n: number }[]
  const flagsBy = new Map(flagged.map((f) => [f.splicerId, f.n]))
  const lines = [`Production report ${day} (UTC) — ${project.code} ${project.name}`, '', 'Per splicer']
  if (items.length === 0) lines.push('  No splices were logged.')
  const crewTotals = new Map<string, { splices: number; resplices: number; flags: number }>()
  for (const row of items) {
    const flags = flagsBy.get(row.splicerId) ?? 0
    const crew = row.crewId ? (crews.get(row.crewId) ?? 'unknown crew') : 'no crew'
    lines.push(
      `  ${row.splicerName} (${crew}): ${row.splices} splices, ${row.resplices ?? 0} re-splices, ${flags} flagged, ${row.overTarget} over target, ${row.closures} closures worked`,
    )
    const total = crewTotals.get(crew) ?? { splices: 0, resplices: 0, flags: 0 }
    total.splices += row.splices
    total.resplices += row.resplices ?? 0
    total.flags += flags
    crewTotals.set(crew, total)
  }
  lines.push('', 'Per crew')
  const crewNames = new Set([
    ...crewTotals.keys(),
    ...completed.map((c) => (c.crewId ? (crews.get(c.crewId) ?? 'unknown crew') : 'no crew')),
  ])
  if (crewNames.size === 0) lines.push('  Nothing to report.')
  for (const crew of [...crewNames].sort()) {
    const t = crewTotals.get(crew) ?? { splices: 0, resplices: 0, flags: 0 }
    const done =
      completed.find((c) => (c.crewId ? (crews.get(c.crewId) ?? 'unknown crew') : 'no crew') === crew)?.n ?? 0
    lines.push(
      `  ${crew}: ${t.splices} splices, ${t.resplices} re-splices, ${done} closures completed, ${t.flags} flagged`,
    )
  }
  lines.push('', 'Losses here are the splicers’ estimates; OTDR measurements are reported separately.')
  return { subject: `Production ${day} — ${project.code}`, text: lines.join('\n') }
}

/** Mails the day's production report of every project (or one) to the office and the foremen. */
export async function sendProductionReports(ctx: AppContext, day: string, projectId?: string, key = day) {
  const projects = ctx.database.sqlite
    .prepare(`SELECT id FROM projects WHERE deleted = 0 ${projectId ? 'AND id = ?' : ''} ORDER BY code`)
    .all(...(projectId ? [projectId] : [])) as { id: string }[]
  const to = recipientsOf(ctx, ['office', 'foreman'])
  const results = []
  for (const p of projects) {
    results.push(
      await sendLogged(ctx, 'production', `${p.id}:${key}`, async () => ({
        to,
        ...productionReportText(ctx, p.id, day),
      })),
    )
  }
  return results
}

/** The "send now" button: the report of the given day for one project, sent again each time it is asked for. */
export async function sendProductionReportNow(
  ctx: AppContext,
  actor: Actor,
  projectId: unknown,
  body: unknown,
) {
  const { day } = productionReportRequestSchema.parse(body)
  const project = ctx.database.sqlite
    .prepare('SELECT id FROM projects WHERE id = ? AND deleted = 0')
    .get(String(projectId)) as { id: string } | undefined
  if (!project) throw new AppError('not_found', 'The project was not found.', 404)
  const [state] = await sendProductionReports(ctx, day, project.id, `${day}:on-demand:${uuidv7()}`)
  if (state === 'failed')
    throw new AppError('mail_failed', 'The report could not be sent; it is recorded for a retry.', 502)
  recordEvent(
    ctx.database.sqlite,
    { userId: actor.id, entity: 'project', entityId: project.id, at: new Date().toISOString() },
    'created',
    {
      productionReport: day,
    },
  )
  return { sent: state === 'sent', recipients: recipientsOf(ctx, ['office', 'foreman']).length }
}

/** The sign-off messages being made, per app and closure. */
const notifying = new WeakMap<AppContext, Map<string, Promise<unknown>>>()

/**
 * Stores the close-out PDF of the closure's current sign-off (once, see closeOutArchive.ts) and mails the
 * office that stored copy; once per sign-off. When the copy cannot be stored the message is logged as
 * failed without being sent, and `retryFailedMail` stores and sends it later. Never throws.
 */
export function notifySignedOff(ctx: AppContext, closureId: string): Promise<unknown> {
  // The daily job may reach a sign-off whose message is still being made: it waits for that one instead
  // of sending a second.
  const running = notifying.get(ctx) ?? new Map<string, Promise<unknown>>()
  notifying.set(ctx, running)
  const pending = running.get(closureId)
  if (pending) return pending
  const job = sendSignedOff(ctx, closureId).finally(() => running.delete(closureId))
  running.set(closureId, job)
  return job
}

async function sendSignedOff(ctx: AppContext, closureId: string): Promise<unknown> {
  const row = ctx.database.sqlite
    .prepare("SELECT label, signed_off_at AS at FROM closures WHERE id = ? AND state = 'signed_off'")
    .get(closureId) as { label: string; at: string } | undefined
  if (!row) return 'skipped'
  const kind = 'signed_off'
  const key = `${closureId}:${row.at}`
  const to = recipientsOf(ctx, ['office'])
  const subject = `Signed off: ${row.label}`
  let pdf: Buffer
  try {
    const stored = await archiveCloseOut(ctx, closureId)
    if (!stored) return 'skipped'
    pdf = await storedCloseOutBytes(ctx, stored)
  } catch (error) {
    console.error(`mail ${kind} ${key}: the close-out report could not be stored`, error)
    const prior = ctx.database.sqlite
      .prepare('SELECT state, attempts FROM mail_log WHERE kind = ? AND key = ?')
      .get(kind, key) as { state: string; attempts: number } | undefined
    if (prior?.state === 'sent' || to.length === 0) return 'skipped'
    // The message carries the stored copy: without one it waits, logged failed, for the retry.
    logMail(ctx, kind, key, { to, subject }, prior?.attempts ?? 0, error)
    return 'failed'
  }
  return sendLogged(ctx, kind, key, async () => {
    const data = await closeOutData(ctx, systemActor(ctx), closureId, { photos: false })
    const r = data.rollup
    return {
      to,
      subject,
      text: [
        `${row.label} (${data.project.code}) was signed off by ${data.closure.signedOffBy ?? 'a lead'} at ${row.at}.`,
        `${r.logged} of ${r.planned} planned splices logged, ${r.overTarget} over target, ${r.resplices} re-splices.`,
        'The close-out report is attached.',
      ].join('\n'),
      attachments: [{ filename: closeOutFilename(row.label), content: pdf, contentType: 'application/pdf' }],
    }
  })
}

/**
 * After a push committed: stores the close-out report of each closure the batch signed off and mails it.
 * Runs in the background; never fails the sync.
 */
export function afterPush(
  ctx: AppContext,
  mutations: { seq: number; name: string; args: unknown }[],
  results: { seq: number; status: string }[],
): void {
  const applied = new Set(results.filter((r) => r.status === 'applied').map((r) => r.seq))
  for (const m of mutations) {
    if (m.name !== 'signOffClosure' || !applied.has(m.seq)) continue
    const closureId = (m.args as { closureId?: unknown } | null)?.closureId
    if (typeof closureId === 'string')
      ctx.mailer.track(notifySignedOff(ctx, closureId).catch((e: unknown) => console.error(e)))
  }
}

// How far back the daily job looks for a sign-off whose message was never even attempted.
const owedSignOffDays = 7

/**
 * Sends the sign-off messages still owed, storing their close-out report first (daily schedule): those that
 * failed before, and those of the last week's sign-offs with no message logged at all (the server stopped
 * between committing the sign-off and sending its message). `now` is the clock.
 */
export async function retryFailedMail(ctx: AppContext, now: Date = new Date()) {
  const sqlite = ctx.database.sqlite
  const failed = sqlite
    .prepare("SELECT key FROM mail_log WHERE kind = 'signed_off' AND state = 'failed'")
    .pluck()
    .all() as string[]
  const unlogged = sqlite
    .prepare(
      `SELECT c.id, c.signed_off_at AS at FROM closures c
        WHERE c.deleted = 0 AND c.state = 'signed_off' AND c.signed_off_at IS NOT NULL
          AND NOT EXISTS (SELECT 1 FROM mail_log m
                           WHERE m.kind = 'signed_off' AND m.key = c.id || ':' || c.signed_off_at)
        ORDER BY c.signed_off_at`,
    )
    .all() as { id: string; at: string }[]
  // signed_off_at is the device's time with its offset, so the window is judged on the instant; one ahead
  // of the server's clock waits until it is past.
  const until = now.getTime()
  const since = until - owedSignOffDays * 86_400_000
  const owed = unlogged
    .filter((row) => Date.parse(row.at) >= since && Date.parse(row.at) <= until)
    .map((row) => row.id)
  for (const closureId of [...failed.map((key) => key.slice(0, 36)), ...owed])
    await notifySignedOff(ctx, closureId)
}

const hashToken = (token: string) => createHash('sha256').update(token).digest('hex')

function issueToken(ctx: AppContext, userId: string, purpose: 'invitation' | 'reset', now: Date) {
  const token = randomBytes(32).toString('base64url')
  const ttl =
    purpose === 'invitation'
      ? ctx.config.mail.invitationHours * 3_600_000
      : ctx.config.mail.resetMinutes * 60_000
  ctx.database.sqlite
    .prepare(
      'INSERT INTO mail_tokens (id, user_id, purpose, token_hash, created_at, expires_at) VALUES (?, ?, ?, ?, ?, ?)',
    )
    .run(
      uuidv7(),
      userId,
      purpose,
      hashToken(token),
      now.toISOString(),
      new Date(now.getTime() + ttl).toISOString(),
    )
  return token
}

/** Creates a user without a usable password and mails them a link to choose one. */
export async function inviteUser(ctx: AppContext, actor: Actor, body: unknown, now = new Date()) {
  const input = invitationCreateSchema.parse(body)
  // Nobody knows this password: the account opens only through the link.
  const user = createUser(ctx, actor, { ...input, password: randomBytes(24).toString('base64url') })
  const token = issueToken(ctx, user.id, 'invitation', now)
  const link = `${ctx.config.mail.publicUrl}/welcome?token=${token}`
  const state = await sendLogged(ctx, 'invitation', `${user.id}:${now.toISOString()}`, async () => ({
    to: [user.email],
    subject: 'You are invited to Lightseam',
    text: `${user.name},\n\n${actor.name} invited you to Lightseam as ${user.role}.\nChoose your password here (the link works once, for ${ctx.config.mail.invitationHours} hours):\n${link}\n`,
  }))
  return { user, mailed: state === 'sent' }
}

/** Mails a reset link when the address belongs to an active user; answers the same either way. */
export async function requestPasswordReset(ctx: AppContext, body: unknown, now = new Date()) {
  const { email } = passwordResetRequestSchema.parse(body)
  const user = ctx.database.sqlite
    .prepare('SELECT id, name, email FROM users WHERE email = ? AND active = 1')
    .get(email) as { id: string; name: string; email: string } | undefined
  if (user) {
    const token = issueToken(ctx, user.id, 'reset', now)
    const link = `${ctx.config.mail.publicUrl}/reset-password?token=${token}`
    await sendLogged(ctx, 'reset', `${user.id}:${now.toISOString()}`, async () => ({
      to: [user.email],
      subject: 'Reset your Lightseam password',
      text: `${user.name},\n\nSomeone asked to reset your Lightseam password. If it was you, choose a new one here (the link works once, for ${ctx.config.mail.resetMinutes} minutes):\n${link}\n\nIf it was not you, ignore this message.\n`,
    }))
  }
  return { accepted: true }
}

const badLink = () => new AppError('invalid_link', 'This link is not valid any more; ask for a new one.', 400)

/**
 * Spends an invitation or reset token and sets the password; the token is used at most once, and the
 * password change ends every session the user had (its token version is bumped).
 */
export function usePasswordToken(
  ctx: AppContext,
  purpose: 'invitation' | 'reset',
  body: unknown,
  now = new Date(),
) {
  const input = tokenPasswordSchema.parse(body)
  const hash = hashToken(input.token)
  const passwordHash = bcrypt.hashSync(input.password, ctx.config.bcryptCost)
  const userId = writeTransaction(ctx.database.sqlite, () => {
    const row = ctx.database.sqlite
      .prepare(
        `SELECT t.id, t.user_id AS userId, t.expires_at AS expiresAt, t.used_at AS usedAt, u.active
           FROM mail_tokens t JOIN users u ON u.id = t.user_id WHERE t.token_hash = ? AND t.purpose = ?`,
      )
      .get(hash, purpose) as
      { id: string; userId: string; expiresAt: string; usedAt: string | null; active: number } | undefined
    if (!row || row.usedAt !== null || row.expiresAt <= now.toISOString() || !row.active) throw badLink()
    ctx.database.sqlite
      .prepare('UPDATE mail_tokens SET used_at = ? WHERE id = ?')
      .run(now.toISOString(), row.id)
    ctx.database.sqlite
      .prepare('UPDATE users SET password_hash = ?, token_version = token_version + 1 WHERE id = ?')
      .run(passwordHash, row.userId)
    ctx.database.sqlite
      .prepare('UPDATE refresh_tokens SET revoked_at = ? WHERE user_id = ? AND revoked_at IS NULL')
      .run(now.toISOString(), row.userId)
    recordEvent(
      ctx.database.sqlite,
      { userId: row.userId, entity: 'user', entityId: row.userId, at: now.toISOString() },
      'applied',
      {
        password: purpose === 'invitation' ? '(set from invitation)' : '(reset)',
      },
    )
    return row.userId
  })
  return { userId, passwordSet: true }
}

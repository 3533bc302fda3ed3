import type { ParsedMail } from 'mailparser'
import request from 'supertest'
import { v7 as uuidv7 } from 'uuid'
import { afterEach, describe, expect, it } from 'vitest'
import { startDailyReport } from '../../server/mail/schedule'
import type { Actor } from '../../server/middleware/auth'
import { inviteUser, notifySignedOff } from '../../server/services/mail'
import { pushMutations } from '../../server/services/sync'
import { demoUser, makeTestApp, tableCounts, type DemoWho, type TestApp } from './support/app'
import { received, runDailyJob } from './support/mail'
import { pdfText } from './support/pdf'
import { closureId, mutation, newClientId, pushOk } from './support/sync'

let apps: TestApp[] = []
function app(overrides: Parameters<typeof makeTestApp>[0] = {}): TestApp {
  const t = makeTestApp(overrides)
  apps.push(t)
  return t
}
afterEach(async () => {
  for (const t of apps) {
    await t.close()
  }
  apps = []
})

const toOf = (mail: ParsedMail) =>
  (Array.isArray(mail.to) ? mail.to : [mail.to!]).map((a) => a.text).join(', ')
const linkToken = (mail: ParsedMail) => /token=([A-Za-z0-9_-]+)/.exec(mail.text ?? '')![1]!
const projectId = (t: TestApp) =>
  (t.database.sqlite.prepare('SELECT id FROM projects').get() as { id: string }).id
const demoUserId = (t: TestApp, who: DemoWho) =>
  (
    t.database.sqlite.prepare('SELECT id FROM users WHERE email = ?').get(demoUser(who).email) as {
      id: string
    }
  ).id
const officeActor = (t: TestApp) => ({
  ...(t.database.sqlite.prepare("SELECT id, email, name FROM users WHERE role = 'office'").get() as {
    id: string
    email: string
    name: string
  }),
  role: 'office' as const,
  crewId: null,
})

describe('production report', () => {
  it('when the office sends the report now, then office and foremen receive per-splicer and per-crew counts', async () => {
    const t = app()
    const res = await request(t.app)
      .post(`/api/projects/${projectId(t)}/production-report`)
      .set('Authorization', await t.tokenFor('office'))
      .send({ day: '2025-06-10' })
    expect(res.status).toBe(200)
    const [mail, ...more] = await received(t)
    expect(more).toHaveLength(0)
    expect(mail!.subject).toBe('Production 2025-06-10 — CVF-FTTH-01')
    for (const who of ['office', 'foreman', 'foreman2'] as const)
      expect(toOf(mail!)).toContain(demoUser(who).email)
    expect(toOf(mail!)).not.toContain(demoUser('splicer').email)
    // Counted here from the rows, per splicer: attempts and re-splices on that day.
    const rows = t.database.sqlite
      .prepare(
        `SELECT u.name, count(*) AS n, sum(s.attempt > 1) AS re FROM splices s JOIN users u ON u.id = s.splicer_id
          WHERE substr(s.spliced_at, 1, 10) = '2025-06-10' AND s.deleted = 0 GROUP BY u.id`,
      )
      .all() as { name: string; n: number; re: number }[]
    expect(rows.length).toBeGreaterThan(0)
    for (const row of rows) expect(mail!.text).toContain(`${row.name} (`)
    for (const row of rows)
      expect(mail!.text).toMatch(
        new RegExp(`${row.name} \\([^)]+\\): ${row.n} splices, ${row.re} re-splices`),
      )
    expect(mail!.text).toContain('Per crew')
  })

  it('when the day is missing, then 400 and nothing is sent or written', async () => {
    const t = app()
    const auth = await t.tokenFor('office')
    const before = tableCounts(t.database)
    const res = await request(t.app)
      .post(`/api/projects/${projectId(t)}/production-report`)
      .set('Authorization', auth)
      .send({ day: 'yesterday' })
    expect(res.status).toBe(400)
    expect(res.body.error.code).toBe('invalid_input')
    expect(tableCounts(t.database)).toEqual(before)
  })

  it('when the configured time comes, then the daily job fires then and mails that day’s report', async () => {
    const t = app()
    t.config.mail.dailyReportAt = '07:30'
    t.config.mail.timezone = 'America/Chicago'
    const daily = startDailyReport(t.ctx, { now: () => new Date('2025-06-10T12:30:00Z'), paused: true })
    try {
      // 07:30 in Chicago in June is 12:30 UTC (CDT, UTC−5).
      expect(daily.job.nextRun(new Date('2025-06-10T00:00:00Z'))?.toISOString()).toBe(
        '2025-06-10T12:30:00.000Z',
      )
      expect(daily.job.nextRun(new Date('2025-06-10T12:30:00Z'))?.toISOString()).toBe(
        '2025-06-11T12:30:00.000Z',
      )
      await daily.job.trigger()
      await daily.lastRun()
      const mails = await received(t)
      expect(mails.map((m) => m.subject)).toEqual(['Production 2025-06-10 — CVF-FTTH-01'])
      // Firing again the same day sends nothing new: the report is logged as sent.
      await daily.job.trigger()
      await daily.lastRun()
      expect(await received(t)).toHaveLength(1)
    } finally {
      daily.stop()
    }
    expect(daily.job.isRunning()).toBe(false)
  })
})

describe('sign-off message', () => {
  it('when a foreman’s push signs a closure off, then the office receives one message with the close-out PDF', async () => {
    const t = app()
    const id = closureId(t, 'PED-03')
    const answer = await pushOk(t, 'foreman', newClientId(), [
      mutation(1, 'signOffClosure', { closureId: id, note: 'Tidy work.' }),
    ])
    expect(answer.results[0]!.status).toBe('applied')
    const mails = await received(t)
    expect(mails).toHaveLength(1)
    expect(mails[0]!.subject).toBe('Signed off: PED-03 Sloe Hill')
    expect(toOf(mails[0]!)).toBe(demoUser('office').email)
    const pdf = mails[0]!.attachments[0]!
    expect(pdf.contentType).toBe('application/pdf')
    expect(pdf.filename).toBe('close-out-PED-03-Sloe-Hill.pdf')
    const text = await pdfText(pdf.content)
    expect(text).toContain('Close-out report — PED-03 Sloe Hill')
    expect(text).toContain('Signed off by Ines Barrowclough')
    // The same sign-off pushed again from another device mails nothing more.
    await pushOk(t, 'foreman', newClientId(), [mutation(1, 'signOffClosure', { closureId: id })])
    expect(await received(t)).toHaveLength(1)
  })

  it('when a refused sign-off is re-applied by the office, then the office receives the same one message as for a push', async () => {
    const t = app()
    const id = closureId(t, 'PED-03')
    const { sqlite } = t.database
    const foreman = demoUserId(t, 'foreman')
    const client = newClientId()
    const at = new Date().toISOString()
    sqlite
      .prepare('INSERT INTO sync_clients (client_id, user_id, created_at, last_seen_at) VALUES (?, ?, ?, ?)')
      .run(client, foreman, at, at)
    // A sign-off the server refused earlier, kept in quarantine for a lead to re-apply.
    const rejectedId = Number(
      sqlite
        .prepare(
          `INSERT INTO rejected_mutations (client_id, seq, user_id, name, args, code, message, at)
           VALUES (?, 1, ?, 'signOffClosure', ?, 'conflict', 'Changed meanwhile.', ?)`,
        )
        .run(client, foreman, JSON.stringify({ closureId: id, note: 'Tidy work.' }), at).lastInsertRowid,
    )
    expect(await received(t)).toHaveLength(0)
    const res = await request(t.app)
      .post(`/api/sync/rejected/${rejectedId}/reapply`)
      .set('Authorization', await t.tokenFor('office'))
      .send({})
    expect(res.status).toBe(200)
    expect(res.body.result.status).toBe('applied')
    const mails = await received(t)
    expect(mails).toHaveLength(1)
    expect(mails[0]!.subject).toBe('Signed off: PED-03 Sloe Hill')
    expect(toOf(mails[0]!)).toBe(demoUser('office').email)
    expect(mails[0]!.attachments[0]!.filename).toBe('close-out-PED-03-Sloe-Hill.pdf')
    // Re-applying again is refused and mails nothing more; nor does the same sign-off pushed afterwards.
    const again = await request(t.app)
      .post(`/api/sync/rejected/${rejectedId}/reapply`)
      .set('Authorization', await t.tokenFor('office'))
      .send({})
    expect(again.status).toBe(409)
    await pushOk(t, 'foreman', newClientId(), [mutation(1, 'signOffClosure', { closureId: id })])
    expect(await received(t)).toHaveLength(1)
  })

  it('when the server stopped between a sign-off and its message, then the daily job sends it, once', async () => {
    const t = app()
    const id = closureId(t, 'PED-03')
    const foreman = t.database.sqlite
      .prepare('SELECT id, email, name, role, crew_id AS crewId FROM users WHERE email = ?')
      .get(demoUser('foreman').email) as Actor
    // The batch commits as a push does, and nothing after it runs: the route's message never starts.
    const answer = pushMutations(t.ctx, foreman, {
      clientId: newClientId(),
      schemaVersion: 1,
      mutations: [mutation(1, 'signOffClosure', { closureId: id })],
    })
    expect(answer.results[0]!.status).toBe('applied')
    await t.ctx.mailer.idle()
    expect(await received(t)).toHaveLength(0)

    // The mutation's clientTime (2025-06-11 08:15 +01:00) is the sign-off time; the job runs that evening.
    await runDailyJob(t, '2025-06-11T18:00:00Z', 2)
    const signedOff = (await received(t)).filter((m) => m.subject === 'Signed off: PED-03 Sloe Hill')
    expect(signedOff).toHaveLength(1)
    expect(toOf(signedOff[0]!)).toBe(demoUser('office').email)
    expect(signedOff[0]!.attachments[0]!.filename).toBe('close-out-PED-03-Sloe-Hill.pdf')
  })

  it('when the daily job reaches a sign-off whose message is still being made, then one message goes out', async () => {
    const t = app()
    const id = closureId(t, 'PED-03')
    const foreman = t.database.sqlite
      .prepare('SELECT id, email, name, role, crew_id AS crewId FROM users WHERE email = ?')
      .get(demoUser('foreman').email) as Actor
    pushMutations(t.ctx, foreman, {
      clientId: newClientId(),
      schemaVersion: 1,
      mutations: [mutation(1, 'signOffClosure', { closureId: id })],
    })
    // The route's message and the retry, both started before either has logged anything.
    await Promise.all([notifySignedOff(t.ctx, id), notifySignedOff(t.ctx, id)])
    const signedOff = (await received(t)).filter((m) => m.subject === 'Signed off: PED-03 Sloe Hill')
    expect(signedOff).toHaveLength(1)
  })

  it('when a sign-off without a message is more than a week old, then the daily job leaves it be', async () => {
    const t = app()
    const signOffMails = async () =>
      (await received(t)).filter((m) => m.subject?.startsWith('Signed off:')).map((m) => m.subject)
    // The demo's BLD-04 was signed off at 2025-06-10 16:40 with no message logged.
    await runDailyJob(t, '2025-06-18T18:00:00Z')
    expect(await signOffMails()).toEqual([])
    // Within the week it is owed one.
    await runDailyJob(t, '2025-06-12T18:00:00Z')
    expect(await signOffMails()).toEqual(['Signed off: BLD-04 Old Maltings'])
  })

  it('when a re-applied change is not a sign-off, then no sign-off message goes out', async () => {
    const t = app()
    const { sqlite } = t.database
    const foreman = demoUserId(t, 'foreman')
    const client = newClientId()
    const at = new Date().toISOString()
    sqlite
      .prepare('INSERT INTO sync_clients (client_id, user_id, created_at, last_seen_at) VALUES (?, ?, ?, ?)')
      .run(client, foreman, at, at)
    const args = {
      id: uuidv7(),
      entity: 'closure',
      entityId: closureId(t, 'PED-03'),
      body: 'Lid gasket replaced.',
    }
    const rejectedId = Number(
      sqlite
        .prepare(
          `INSERT INTO rejected_mutations (client_id, seq, user_id, name, args, code, message, at)
           VALUES (?, 1, ?, 'addNote', ?, 'conflict', 'Changed meanwhile.', ?)`,
        )
        .run(client, foreman, JSON.stringify(args), at).lastInsertRowid,
    )
    const res = await request(t.app)
      .post(`/api/sync/rejected/${rejectedId}/reapply`)
      .set('Authorization', await t.tokenFor('office'))
      .send({})
    expect(res.body.result.status).toBe('applied')
    expect(await received(t)).toHaveLength(0)
  })

  it('when the mail server cannot be reached, then the sync still succeeds and the failure is recorded', async () => {
    const base = app()
    // Port 9 (discard) has no listener on loopback here: every connection is refused.
    const failing = app({ mail: { ...base.config.mail, smtpUrl: 'smtp://127.0.0.1:9' } })
    const id = closureId(failing, 'PED-03')
    const answer = await pushOk(failing, 'foreman', newClientId(), [
      mutation(1, 'signOffClosure', { closureId: id }),
    ])
    expect(answer.results[0]!.status).toBe('applied')
    // The message goes out after the answer; wait until its attempts are logged.
    for (let i = 0; i < 100 && !failing.database.sqlite.prepare('SELECT 1 FROM mail_log').get(); i += 1) {
      await failing.ctx.mailer.idle()
      await new Promise((r) => setImmediate(r))
    }
    const log = failing.database.sqlite
      .prepare("SELECT state, attempts, error FROM mail_log WHERE kind = 'signed_off'")
      .get() as {
      state: string
      attempts: number
      error: string
    }
    expect(log).toMatchObject({ state: 'failed', attempts: 2 })
    expect(
      (
        failing.database.sqlite.prepare('SELECT state FROM closures WHERE id = ?').get(id) as {
          state: string
        }
      ).state,
    ).toBe('signed_off')
  })
})

describe('invitations and resets', () => {
  const password = 'a long enough password'

  it('when a user is invited, then the link sets their password once and a second use is refused', async () => {
    const t = app()
    const res = await request(t.app)
      .post('/api/invitations')
      .set('Authorization', await t.tokenFor('office'))
      .send({
        id: uuidv7(),
        email: 'rosalind.fenwick@corvell-ford.invalid',
        name: 'Rosalind Fenwick',
        role: 'splicer',
      })
    expect(res.status).toBe(201)
    expect(res.body.mailed).toBe(true)
    const [mail] = await received(t)
    expect(mail!.subject).toBe('You are invited to Lightseam')
    expect(mail!.text).toContain(`${t.config.mail.publicUrl}/welcome?token=`)
    const token = linkToken(mail!)
    const signIn = () =>
      request(t.app)
        .post('/api/auth/sign-in')
        .send({ email: 'rosalind.fenwick@corvell-ford.invalid', password })
    expect((await signIn()).status).toBe(401)
    const accept = await request(t.app).post('/api/auth/invitation/accept').send({ token, password })
    expect(accept.status).toBe(200)
    expect((await signIn()).status).toBe(200)
    const again = await request(t.app)
      .post('/api/auth/invitation/accept')
      .send({ token, password: 'another long password' })
    expect(again.status).toBe(400)
    expect(again.body.error).toMatchObject({ code: 'invalid_link', message: expect.any(String) })
    expect((await signIn()).status).toBe(200)
  })

  it('when an invitation link has expired, then it is refused and the password stays unset', async () => {
    const t = app()
    const hours = t.config.mail.invitationHours
    const { user } = await inviteUser(
      t.ctx,
      officeActor(t),
      { id: uuidv7(), email: 'late.comer@corvell-ford.invalid', name: 'Late Comer', role: 'foreman' },
      new Date(Date.now() - (hours * 3_600_000 + 60_000)),
    )
    const token = linkToken((await received(t))[0]!)
    const before = t.database.sqlite.prepare('SELECT password_hash FROM users WHERE id = ?').get(user.id)
    const res = await request(t.app).post('/api/auth/invitation/accept').send({ token, password })
    expect(res.status).toBe(400)
    expect(res.body.error.code).toBe('invalid_link')
    expect(t.database.sqlite.prepare('SELECT password_hash FROM users WHERE id = ?').get(user.id)).toEqual(
      before,
    )
  })

  it('when a password is reset, then the old sessions end, the link works once, and an unknown address answers the same', async () => {
    const t = app()
    const splicer = demoUser('splicer')
    const oldToken = await t.tokenFor('splicer')
    expect((await request(t.app).get('/api/auth/me').set('Authorization', oldToken)).status).toBe(200)
    const ask = await request(t.app).post('/api/auth/password-reset').send({ email: splicer.email })
    expect(ask.status).toBe(202)
    const unknown = await request(t.app)
      .post('/api/auth/password-reset')
      .send({ email: 'nobody@corvell-ford.invalid' })
    expect(unknown.status).toBe(202)
    expect(unknown.body).toEqual(ask.body)
    const mails = await received(t)
    expect(mails).toHaveLength(1)
    expect(mails[0]!.subject).toBe('Reset your Lightseam password')
    const token = linkToken(mails[0]!)
    const reset = await request(t.app).post('/api/auth/password-reset/confirm').send({ token, password })
    expect(reset.status).toBe(200)
    expect((await request(t.app).get('/api/auth/me').set('Authorization', oldToken)).status).toBe(401)
    expect(
      (
        await request(t.app)
          .post('/api/auth/sign-in')
          .send({ email: splicer.email, password: splicer.password })
      ).status,
    ).toBe(401)
    expect(
      (await request(t.app).post('/api/auth/sign-in').send({ email: splicer.email, password })).status,
    ).toBe(200)
    const reuse = await request(t.app)
      .post('/api/auth/password-reset/confirm')
      .send({ token, password: 'yet another password' })
    expect(reuse.status).toBe(400)
    expect(reuse.body.error.code).toBe('invalid_link')
    const forged = await request(t.app)
      .post('/api/auth/password-reset/confirm')
      .send({ token: 'x'.repeat(43), password })
    expect(forged.status).toBe(400)
    expect(forged.body.error.code).toBe('invalid_link')
  })

  it('when a reset link is older than its lifetime, then it is refused', async () => {
    const t = app()
    const { requestPasswordReset } = await import('../../server/services/mail')
    await requestPasswordReset(
      t.ctx,
      { email: demoUser('foreman').email },
      new Date(Date.now() - (t.config.mail.resetMinutes + 1) * 60_000),
    )
    const token = linkToken((await received(t))[0]!)
    const res = await request(t.app).post('/api/auth/password-reset/confirm').send({ token, password })
    expect(res.status).toBe(400)
    expect(res.body.error.code).toBe('invalid_link')
  })
})

describe('demo mailbox', () => {
  it('when messages were caught, then the office lists them, opens one and downloads its attachment', async () => {
    const t = app()
    await pushOk(t, 'foreman', newClientId(), [
      mutation(1, 'signOffClosure', { closureId: closureId(t, 'PED-03') }),
    ])
    await received(t)
    const office = await t.tokenFor('office')
    const list = await request(t.app).get('/api/mailbox').set('Authorization', office)
    expect(list.status).toBe(200)
    expect(list.body.total).toBe(1)
    expect(list.body.items[0]).toMatchObject({ subject: 'Signed off: PED-03 Sloe Hill', attachments: 1 })
    const one = await request(t.app).get(`/api/mailbox/${list.body.items[0].id}`).set('Authorization', office)
    expect(one.body.text).toContain('The close-out report is attached.')
    expect(one.body.attachmentList[0]).toMatchObject({ index: 0, filename: 'close-out-PED-03-Sloe-Hill.pdf' })
    const file = await request(t.app)
      .get(`/api/mailbox/${list.body.items[0].id}/attachments/0`)
      .set('Authorization', office)
      .buffer(true)
      .parse((res, cb) => {
        const chunks: Buffer[] = []
        res.on('data', (c: Buffer) => chunks.push(c))
        res.on('end', () => cb(null, Buffer.concat(chunks)))
      })
    expect(file.status).toBe(200)
    expect(file.headers['content-disposition']).toBe('attachment; filename="close-out-PED-03-Sloe-Hill.pdf"')
    expect((file.body as Buffer).subarray(0, 5).toString()).toBe('%PDF-')
    const missing = await request(t.app).get('/api/mailbox/../../etc/passwd').set('Authorization', office)
    expect(missing.status).toBe(404)
  })
})

import nodemailer, { type Transporter } from 'nodemailer'
import type { MailConfig } from '../config'
import { startFakeSmtp, type FakeSmtp } from './fakeSmtp'

export interface OutgoingMail {
  to: string[]
  subject: string
  text: string
  attachments?: { filename: string; content: Buffer; contentType: string }[]
}

/** Sends mail over SMTP; every send is tracked so a caller (a test, shutdown) can wait for the queue to drain. */
export interface Mailer {
  send(mail: OutgoingMail): Promise<void>
  /** Counts a background job (building and sending a message) as pending until it settles. */
  track(job: Promise<unknown>): void
  /** Resolves once every send and tracked job started so far has finished (sent or failed). */
  idle(): Promise<void>
  close(): Promise<void>
}

/** The mailer for the configured SMTP server, or for a fake one on loopback started on first use. */
export function createMailer(config: MailConfig): Mailer {
  let fake: Promise<FakeSmtp> | null = null
  let transport: Promise<Transporter> | null = null
  const pending = new Set<Promise<unknown>>()
  const transporter = () => {
    transport ??= config.smtpUrl
      ? Promise.resolve(nodemailer.createTransport(config.smtpUrl))
      : (fake = startFakeSmtp(config.dir)).then((smtp) =>
          nodemailer.createTransport({ host: '127.0.0.1', port: smtp.port, secure: false, ignoreTLS: true }),
        )
    return transport
  }
  return {
    send(mail) {
      const job = transporter().then((t) =>
        t.sendMail({
          from: config.from,
          to: mail.to.join(', '),
          subject: mail.subject,
          text: mail.text,
          attachments: mail.attachments,
        }),
      )
      this.track(job)
      return job.then(() => undefined)
    },
    track(job) {
      pending.add(job)
      void job.finally(() => pending.delete(job)).catch(() => {})
    },
    async idle() {
      while (pending.size > 0) await Promise.allSettled([...pending])
    },
    async close() {
      await this.idle()
      ;(await transport)?.close()
      await (await fake)?.close()
      fake = null
      transport = null
    },
  }
}

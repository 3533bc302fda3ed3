import { mkdirSync, renameSync, writeFileSync } from 'node:fs'
import type { AddressInfo } from 'node:net'
import { join } from 'node:path'
import { SMTPServer } from 'smtp-server'
import { v7 as uuidv7 } from 'uuid'

export interface FakeSmtp {
  port: number
  close: () => Promise<void>
}

/**
 * A local SMTP server on 127.0.0.1 that keeps every message it receives as an .eml file in `dir`
 * (the demo mailbox). It accepts anything and relays nothing.
 */
export function startFakeSmtp(dir: string, port = 0): Promise<FakeSmtp> {
  mkdirSync(dir, { recursive: true })
  const server = new SMTPServer({
    authOptional: true,
    disabledCommands: ['STARTTLS', 'AUTH'],
    banner: 'Lightseam local mail catcher',
    size: 25 * 1024 * 1024,
    logger: false,
    onData(stream, _session, callback) {
      const chunks: Buffer[] = []
      stream.on('data', (chunk: Buffer) => chunks.push(chunk))
      stream.on('end', () => {
        try {
          // uuidv7 ids sort by arrival; the rename makes a half-written file invisible to the mailbox.
          const id = uuidv7()
          const temp = join(dir, `.${id}.tmp`)
          writeFileSync(temp, Buffer.concat(chunks))
          renameSync(temp, join(dir, `${id}.eml`))
          callback()
        } catch (error) {
          callback(error as Error)
        }
      })
    },
  })
  return new Promise((resolve, reject) => {
    server.once('error', reject)
    server.listen(port, '127.0.0.1', () => {
      // The catcher must never keep a finished process (or a test run) alive.
      server.server.unref()
      resolve({
        port: (server.server.address() as AddressInfo).port,
        close: () => new Promise<void>((done) => server.close(() => done())),
      })
    })
  })
}

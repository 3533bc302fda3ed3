import { readdir, readFile } from 'node:fs/promises'
import { join } from 'node:path'
import { simpleParser, type AddressObject, type ParsedMail } from 'mailparser'
import { AppError } from '../errors'

const idPattern = /^[0-9a-f-]{36}$/

const addresses = (value: AddressObject | AddressObject[] | undefined) =>
  (Array.isArray(value) ? value : value ? [value] : []).map((a) => a.text).join(', ')

async function parsed(dir: string, id: string): Promise<ParsedMail> {
  if (!idPattern.test(id)) throw new AppError('not_found', 'The message was not found.', 404)
  const raw = await readFile(join(dir, `${id}.eml`)).catch(() => {
    throw new AppError('not_found', 'The message was not found.', 404)
  })
  return simpleParser(raw)
}

function summary(id: string, mail: ParsedMail) {
  return {
    id,
    from: addresses(mail.from),
    to: addresses(mail.to),
    subject: mail.subject ?? '',
    date: (mail.date ?? new Date(0)).toISOString(),
    attachments: mail.attachments.length,
  }
}

/** The messages the fake SMTP server caught, newest first. */
export async function listMailbox(dir: string, limit = 100) {
  const files = await readdir(dir).catch(() => [] as string[])
  const ids = files
    .filter((f) => f.endsWith('.eml'))
    .map((f) => f.slice(0, -4))
    .filter((id) => idPattern.test(id))
    .sort()
    .reverse()
  const items = []
  for (const id of ids.slice(0, limit)) items.push(summary(id, await parsed(dir, id)))
  return { items, total: ids.length }
}

/** One caught message: headers, plain text and its attachments' names. */
export async function readMailboxMessage(dir: string, id: string) {
  const mail = await parsed(dir, id)
  return {
    ...summary(id, mail),
    text: mail.text ?? '',
    attachmentList: mail.attachments.map((a, index) => ({
      index,
      filename: a.filename ?? `attachment-${index + 1}`,
      contentType: a.contentType,
      size: a.size,
    })),
  }
}

/** One attachment's bytes. */
export async function mailboxAttachment(dir: string, id: string, index: unknown) {
  const mail = await parsed(dir, id)
  const i = typeof index === 'string' && /^[0-9]{1,3}$/.test(index) ? Number(index) : -1
  const attachment = mail.attachments[i]
  if (!attachment) throw new AppError('not_found', 'The attachment was not found.', 404)
  return {
    filename: (attachment.filename ?? `attachment-${i + 1}`).replace(/[^A-Za-z0-9._-]+/g, '-'),
    contentType: attachment.contentType,
    body: attachment.content,
  }
}

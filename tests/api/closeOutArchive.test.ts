import { createHash } from 'node:crypto'
import { mkdirSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs'
import { join, relative } from 'node:path'
import { CreateBucketCommand, GetObjectCommand, ListObjectsV2Command } from '@aws-sdk/client-s3'
import request from 'supertest'
import { afterEach, describe, expect, it } from 'vitest'
import type { Config } from '../../server/config'
import { createS3Client } from '../../server/storage/index'
import { useFakeS3 } from './support/fakeS3'
import { makeTestApp, tableCounts, type TestApp } from './support/app'
import { received, runDailyJob } from './support/mail'
import { pdfText } from './support/pdf'
import { closureId, mutation, newClientId, pushOk } from './support/sync'

// The close-out PDF of a sign-off is rendered once after the push, kept in the report store and recorded in
// close_out_reports; the download and the sign-off message hand out those bytes. Run over the local disk
// and over S3 (a fake S3 server on 127.0.0.1 started here), each with a real push and the local fake SMTP.

const bucket = 'lightseam-reports'
const { endpoint: s3Endpoint } = useFakeS3(bucket, 'lightseam-close-out-')

let apps: TestApp[] = []
afterEach(async () => {
  for (const t of apps) {
    await t.close()
  }
  apps = []
})

const sha256 = (bytes: Buffer | Uint8Array) => createHash('sha256').update(bytes).digest('hex')
const shard = (hash: string) => `${hash.slice(0, 2)}/${hash.slice(2, 4)}/${hash}`
let laterBuckets = 0
let prefixes = 0
const s3Storage = (name: string) =>
  ({
    driver: 's3',
    bucket: name,
    region: 'us-east-1',
    endpoint: s3Endpoint(),
    accessKeyId: 'S3RVER',
    secretAccessKey: 'S3RVER',
    // A prefix of its own per app: the apps share the fake server's bucket.
    prefix: `run-${(prefixes += 1)}/`,
  }) as const

function walk(dir: string): string[] {
  return readdirSync(dir, { withFileTypes: true }).flatMap((entry) =>
    entry.isDirectory() ? walk(join(dir, entry.name)) : [join(dir, entry.name)],
  )
}

/** How each driver is set up, listed, read and broken from outside the app. */
interface Driver {
  overrides: () => Partial<Config>
  /** The key a report with this hash is stored under. */
  keyOf: (t: TestApp, hash: string) => string
  /** Every report object's key, straight from the store. */
  objects: (t: TestApp) => Promise<string[]>
  /** The stored bytes under a key, straight from the store. */
  bytes: (t: TestApp, key: string) => Promise<Buffer>
  /** An app whose report store fails every write until `repair` is called. */
  broken: () => { t: TestApp; repair: () => Promise<void> }
}

const s3Client = () =>
  createS3Client({
    region: 'us-east-1',
    endpoint: s3Endpoint(),
    accessKeyId: 'S3RVER',
    secretAccessKey: 'S3RVER',
  })

const s3Objects = async (t: TestApp) => {
  const store = t.config.storage as ReturnType<typeof s3Storage>
  const answer = await s3Client().send(
    new ListObjectsV2Command({ Bucket: store.bucket, Prefix: `${store.prefix}reports/` }),
  )
  return (answer.Contents ?? []).map((o) => o.Key!).sort()
}

const drivers: Array<[string, Driver]> = [
  [
    'local disk',
    {
      overrides: () => ({}),
      keyOf: (_t, hash) => shard(hash),
      objects: async (t) => {
        const temp = t.ctx.storage.reports.tempDir
        return walk(t.config.reportDir)
          .filter((file) => !file.startsWith(temp))
          .map((file) => relative(t.config.reportDir, file))
          .sort()
      },
      bytes: async (t, key) => readFileSync(join(t.config.reportDir, key)),
      broken: () => {
        const t = app({})
        // The report folder becomes a plain file: every write under it fails (ENOTDIR), as a lost mount would.
        rmSync(t.config.reportDir, { recursive: true, force: true })
        writeFileSync(t.config.reportDir, 'not a folder')
        return {
          t,
          repair: async () => {
            rmSync(t.config.reportDir, { force: true })
            mkdirSync(t.ctx.storage.reports.tempDir, { recursive: true })
          },
        }
      },
    },
  ],
  [
    'S3',
    {
      overrides: () => ({ storage: s3Storage(bucket) }),
      keyOf: (t, hash) =>
        `${(t.config.storage as ReturnType<typeof s3Storage>).prefix}reports/${shard(hash)}`,
      objects: s3Objects,
      bytes: async (t, key) => {
        const store = t.config.storage as ReturnType<typeof s3Storage>
        const answer = await s3Client().send(new GetObjectCommand({ Bucket: store.bucket, Key: key }))
        return Buffer.from(await answer.Body!.transformToByteArray())
      },
      broken: () => {
        // A bucket that does not exist yet: every PUT is refused (NoSuchBucket) until it is created.
        const name = `lightseam-later-${(laterBuckets += 1)}`
        const t = app({ storage: s3Storage(name) })
        return {
          t,
          repair: async () => {
            await s3Client().send(new CreateBucketCommand({ Bucket: name }))
          },
        }
      },
    },
  ],
]

function app(overrides: Partial<Config>): TestApp {
  const t = makeTestApp(overrides)
  apps.push(t)
  return t
}

interface ReportRow {
  closure_id: string
  signed_off_at: string
  sha256: string
  storage_key: string
  size: number
  created_at: string
}
const rowsOf = (t: TestApp, id?: string) =>
  t.database.sqlite
    .prepare(
      `SELECT closure_id, signed_off_at, sha256, storage_key, size, created_at FROM close_out_reports
        ${id ? 'WHERE closure_id = ?' : ''} ORDER BY id`,
    )
    .all(...(id ? [id] : [])) as ReportRow[]
const signedOffAt = (t: TestApp, id: string) =>
  (
    t.database.sqlite.prepare('SELECT signed_off_at AS at FROM closures WHERE id = ?').get(id) as {
      at: string
    }
  ).at

async function download(t: TestApp, id: string, query = '') {
  const res = await request(t.app)
    .get(`/api/closures/${id}/close-out${query}`)
    .set('Authorization', await t.tokenFor('office'))
    .buffer(true)
    .parse((r, done) => {
      const parts: Buffer[] = []
      r.on('data', (part: Buffer) => parts.push(part))
      r.on('end', () => done(null, Buffer.concat(parts)))
    })
  return res as request.Response & { body: Buffer }
}

const signOff = (t: TestApp, id: string, clientTime: string) =>
  pushOk(t, 'foreman', newClientId(), [
    { ...mutation(1, 'signOffClosure', { closureId: id, note: '' }), clientTime },
  ])

describe.each(drivers)('stored close-out reports on the %s', (_name, driver) => {
  it('when a push signs a closure off, then one copy is stored and recorded, and every download and the mail carry those bytes', async () => {
    const t = app(driver.overrides())
    const id = closureId(t, 'PED-03')
    expect(await driver.objects(t)).toEqual([])
    const answer = await signOff(t, id, '2025-06-11T08:15:30.000+01:00')
    expect(answer.results[0]!.status).toBe('applied')
    const mails = await received(t)

    const rows = rowsOf(t)
    expect(rows).toHaveLength(1)
    const [row] = rows as [ReportRow]
    expect(row).toMatchObject({ closure_id: id, signed_off_at: signedOffAt(t, id) })
    expect(await driver.objects(t)).toEqual([row.storage_key])
    const stored = await driver.bytes(t, row.storage_key)
    expect(sha256(stored)).toBe(row.sha256)
    expect(stored.length).toBe(row.size)
    expect(row.storage_key).toBe(driver.keyOf(t, row.sha256))
    expect(await pdfText(stored)).toContain('Signed off by Ines Barrowclough')

    const first = await download(t, id)
    const second = await download(t, id)
    for (const res of [first, second]) {
      expect(res.status).toBe(200)
      expect(res.headers['content-type']).toBe('application/pdf')
      expect(res.headers['content-disposition']).toBe('attachment; filename="close-out-PED-03-Sloe-Hill.pdf"')
      expect(sha256(res.body)).toBe(row.sha256)
    }
    expect(mails).toHaveLength(1)
    expect(sha256(mails[0]!.attachments[0]!.content)).toBe(row.sha256)
    // Nothing more was stored by the downloads.
    expect(rowsOf(t)).toEqual(rows)
    expect(await driver.objects(t)).toEqual([row.storage_key])
  })

  it('when the closure is reopened and signed off again, then the second sign-off gets its own copy and the first stays', async () => {
    const t = app(driver.overrides())
    const id = closureId(t, 'PED-03')
    await signOff(t, id, '2025-06-11T08:15:30.000+01:00')
    await received(t)
    const reopened = await pushOk(t, 'foreman', newClientId(), [
      mutation(1, 'reopenClosure', { closureId: id, reason: 'Tray 2 lid cracked.' }),
    ])
    expect(reopened.results[0]!.status).toBe('applied')
    await signOff(t, id, '2025-06-12T10:00:00.000+01:00')
    const mails = await received(t)

    const rows = rowsOf(t, id)
    expect(rows.map((r) => r.signed_off_at)).toEqual([
      '2025-06-11T08:15:30.000+01:00',
      '2025-06-12T10:00:00.000+01:00',
    ])
    expect(rows[0]!.sha256).not.toBe(rows[1]!.sha256)
    expect(await driver.objects(t)).toEqual(rows.map((r) => r.storage_key).sort())
    for (const r of rows) expect(sha256(await driver.bytes(t, r.storage_key))).toBe(r.sha256)
    // The download is the copy of the current sign-off; each message carried the copy of its own.
    expect(sha256((await download(t, id)).body)).toBe(rows[1]!.sha256)
    expect(mails.map((m) => sha256(m.attachments[0]!.content))).toEqual(rows.map((r) => r.sha256))
    expect(await pdfText(await driver.bytes(t, rows[1]!.storage_key))).toContain(
      'Reopened: Tray 2 lid cracked.',
    )
  })

  it('when the store fails at sign-off, then the sync is applied, the download still answers, and the retry stores and mails one copy', async () => {
    const { t, repair } = driver.broken()
    const id = closureId(t, 'PED-03')
    const answer = await signOff(t, id, '2025-06-11T08:15:30.000+01:00')
    expect(answer.results[0]!.status).toBe('applied')
    expect(await received(t)).toHaveLength(0)
    const state = t.database.sqlite.prepare('SELECT state FROM closures WHERE id = ?').get(id)
    expect(state).toEqual({ state: 'signed_off' })
    expect(rowsOf(t)).toEqual([])
    const log = t.database.sqlite
      .prepare("SELECT state, error FROM mail_log WHERE kind = 'signed_off'")
      .all() as { state: string; error: string }[]
    expect(log).toEqual([{ state: 'failed', error: expect.any(String) }])
    // While the store is down the office still gets a report: rendered now, and nothing recorded.
    const meanwhile = await download(t, id)
    expect(meanwhile.status).toBe(200)
    expect(await pdfText(meanwhile.body)).toContain('Signed off by Ines Barrowclough')
    expect(rowsOf(t)).toEqual([])

    await repair()
    // The first download after the repair stores the copy; the daily job then mails that same copy.
    const served = await download(t, id)
    const [row] = rowsOf(t, id) as [ReportRow]
    expect(sha256(served.body)).toBe(row.sha256)
    await runDailyJob(t, '2025-06-11T18:00:00Z')
    const mails = (await received(t)).filter((m) => m.subject === 'Signed off: PED-03 Sloe Hill')
    expect(mails).toHaveLength(1)
    expect(sha256(mails[0]!.attachments[0]!.content)).toBe(row.sha256)
    expect(rowsOf(t, id)).toEqual([row])
    // The job also stored the copy of every other current sign-off (the demo's signed-off closures): one
    // object per record, each the bytes its record names.
    const all = rowsOf(t)
    const signedOff = t.database.sqlite
      .prepare("SELECT count(*) AS n FROM closures WHERE state = 'signed_off' AND deleted = 0")
      .get() as { n: number }
    expect(all).toHaveLength(signedOff.n)
    expect(await driver.objects(t)).toEqual(all.map((r) => r.storage_key).sort())
    // PED-03's message, and the one the demo's BLD-04 sign-off of the day before was still owed.
    expect(
      t.database.sqlite
        .prepare(
          "SELECT substr(key, 1, 36) AS closureId, state FROM mail_log WHERE kind = 'signed_off' ORDER BY id",
        )
        .all(),
    ).toEqual([
      { closureId: id, state: 'sent' },
      { closureId: closureId(t, 'BLD-04'), state: 'sent' },
    ])
  })

  it('when a closure is not signed off, or a fresh copy is asked for, then the download is rendered now and nothing is stored', async () => {
    const t = app(driver.overrides())
    const vault = closureId(t, 'VLT-01')
    const live = await download(t, vault)
    expect(live.status).toBe(200)
    expect(await pdfText(live.body)).toContain('Not signed off.')
    expect(rowsOf(t)).toEqual([])
    expect(await driver.objects(t)).toEqual([])

    const id = closureId(t, 'PED-03')
    await signOff(t, id, '2025-06-11T08:15:30.000+01:00')
    await received(t)
    const [row] = rowsOf(t) as [ReportRow]
    const fresh = await download(t, id, '?fresh=1')
    expect(fresh.status).toBe(200)
    expect(await pdfText(fresh.body)).toContain('Signed off by Ines Barrowclough')
    expect(sha256(fresh.body)).not.toBe(row.sha256)
    expect(rowsOf(t)).toEqual([row])
    expect(await driver.objects(t)).toEqual([row.storage_key])
  })
})

describe('the close-out download query', () => {
  it('when the query is not fresh=1, then 400 and nothing is written', async () => {
    const t = app({})
    const id = closureId(t, 'BLD-04')
    await t.tokenFor('office')
    const before = tableCounts(t.database)
    for (const query of ['?fresh=yes', '?fresh=1&fresh=1', '?colour=red']) {
      const res = await download(t, id, query)
      expect(res.status).toBe(400)
      expect(JSON.parse(res.body.toString()).error.code).toBe('invalid_input')
    }
    expect(tableCounts(t.database)).toEqual(before)
  })
})

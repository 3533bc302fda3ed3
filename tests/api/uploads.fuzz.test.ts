import { createHash } from 'node:crypto'
import fc from 'fast-check'
import request from 'supertest'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { errorBodySchema } from '#shared/schemas/common'
import { makeTestApp, type TestApp } from './support/app'
import { fingerprint, unchangedSince, type Fingerprint } from './support/fingerprint'
import { iconPng, jpegBytes, storedFiles, tempFiles, webpBytes } from './support/photos'

// Uploads under fuzz: the plan CSV, OTDR CSV files and photo bytes, starting from files the server accepts
// and breaking them the ways files break in the field (quotes, delimiters, BOMs, line endings, NUL bytes,
// other encodings, huge cells, too many rows or columns). The answer is a documented success or a 4xx
// whose details name the spreadsheet row; nothing is written on a refusal; never a 5xx.
// `LIGHTSEAM_FUZZ_RUNS` (default 30) and `LIGHTSEAM_FUZZ_SEED` reproduce a run.

const runs = Number(process.env.LIGHTSEAM_FUZZ_RUNS ?? 30)
const seed = Number(process.env.LIGHTSEAM_FUZZ_SEED ?? Date.now() % 2 ** 31)

let t: TestApp
let office: string
let splicer: string
let closureId: string
let projectId: string
let planCsv: string
let otdrCsv: string
let current: Fingerprint
const tally = { requests: 0, refusals: 0, accepted: 0 }

beforeAll(async () => {
  t = makeTestApp()
  office = await t.tokenFor('office')
  splicer = await t.tokenFor('splicer')
  const db = t.database.sqlite
  // A closure with a plan and no splices yet, so its own plan uploaded again is valid.
  closureId = db
    .prepare(
      `SELECT c.id FROM closures c WHERE EXISTS (SELECT 1 FROM plan_rows p WHERE p.closure_id = c.id AND p.deleted = 0)
       AND NOT EXISTS (SELECT 1 FROM splices s WHERE s.closure_id = c.id) ORDER BY c.label LIMIT 1`,
    )
    .pluck()
    .get() as string
  projectId = db.prepare('SELECT project_id FROM closures WHERE id = ?').pluck().get(closureId) as string
  const rows = db
    .prepare(
      `SELECT t.number AS tray, p.slot, a.label AS cableA, p.fiber_a AS fiberA, b.label AS cableB, p.fiber_b AS fiberB
       FROM plan_rows p JOIN trays t ON t.id = p.tray_id JOIN cables a ON a.id = p.cable_a_id JOIN cables b ON b.id = p.cable_b_id
       WHERE p.closure_id = ? AND p.deleted = 0 ORDER BY t.number, p.slot LIMIT 12`,
    )
    .all(closureId) as {
    tray: number
    slot: number
    cableA: string
    fiberA: number
    cableB: string
    fiberB: number
  }[]
  const quote = (cell: string) => (/[",\n]/.test(cell) ? `"${cell.replace(/"/g, '""')}"` : cell)
  planCsv = [
    'tray,slot,cable_a,fiber_a,cable_b,fiber_b',
    ...rows.map((r) => [r.tray, r.slot, quote(r.cableA), r.fiberA, quote(r.cableB), r.fiberB].join(',')),
    '',
  ].join('\n')
  const template = await request(t.app)
    .get(`/api/projects/${projectId}/otdr/template`)
    .set('Authorization', office)
  otdrCsv = template.text
  current = fingerprint(t.database)
})

afterAll(async () => {
  await t?.close()
  console.warn(
    `uploads fuzz: ${tally.requests} uploads, ${tally.refusals} refused (nothing written), ${tally.accepted} accepted; ` +
      `seed ${seed}, ${runs} runs (LIGHTSEAM_FUZZ_SEED, LIGHTSEAM_FUZZ_RUNS)`,
  )
})

// ---- How files break ---------------------------------------------------------------------------------

type Damage = (text: string) => string
/** Past every body limit (plan 2 MB, JSON 1 MB); damages stop growing a file here. */
const maxFileChars = 3_000_000
const at = (text: string, where: number) => Math.floor(where * (text.length + 1))
const insertAt = (text: string, where: number, what: string) =>
  text.slice(0, at(text, where)) + what + text.slice(at(text, where))

const textDamage: fc.Arbitrary<Damage> = fc.oneof(
  // Unbalanced quotes, here and there.
  fc.double({ min: 0, max: 1, noNaN: true }).map(
    (w): Damage =>
      (s) =>
        insertAt(s, w, '"'),
  ),
  fc.constant<Damage>((s) => s.replace(/\n(?=.)/, '\n"')),
  fc.constant<Damage>((s) => s.replace(/,/, ',"x"y,')),
  // Other delimiters.
  fc.constantFrom(';', '\t', '|', ', ').map(
    (d): Damage =>
      (s) =>
        s.replace(/,/g, d),
  ),
  // A byte-order mark, one or two.
  fc.constantFrom('\uFEFF', '\uFEFF\uFEFF').map(
    (bom): Damage =>
      (s) =>
        bom + s,
  ),
  // Windows and old Mac line endings, or none at the end.
  fc.constantFrom('\r\n', '\r', '\n\n\n').map(
    (eol): Damage =>
      (s) =>
        s.replace(/\n/g, eol),
  ),
  fc.constant<Damage>((s) => s.trimEnd()),
  // NUL and control bytes.
  fc
    .tuple(
      fc.double({ min: 0, max: 1, noNaN: true }),
      fc.constantFrom('\u0000', '\u0000\u0000', '\u001a', '\u0007'),
    )
    .map(
      ([w, c]): Damage =>
        (s) =>
          insertAt(s, w, c),
    ),
  // A huge cell, in the header or a row.
  fc
    .tuple(fc.integer({ min: 0, max: 5 }), fc.constantFrom(10_000, 200_000))
    .map(([cell, size]): Damage => (s) => {
      const lines = s.split('\n')
      const line = Math.min(1, lines.length - 1)
      const cells = lines[line]!.split(',')
      cells[Math.min(cell, cells.length - 1)] = 'x'.repeat(size)
      lines[line] = cells.join(',')
      return lines.join('\n')
    }),
  // Too many columns, too few, too many rows, only the header, nothing.
  fc.integer({ min: 1, max: 50 }).map(
    (n): Damage =>
      (s) =>
        s.replace(/\n(?=.)/g, `${',extra'.repeat(n)}\n`),
  ),
  fc.constant<Damage>((s) => s.replace(/,[^,\n]*\n/g, '\n')),
  fc.constantFrom(2_000, 20_000).map((n): Damage => (s) => {
    const [header, ...rows] = s.trimEnd().split('\n')
    const out = [header]
    let size = 0
    for (let i = 0; out.length <= n && size < maxFileChars; i += 1) {
      out.push(rows[i % rows.length])
      size += (rows[i % rows.length] ?? '').length + 1
    }
    return out.join('\n') + '\n'
  }),
  fc.constant<Damage>((s) => s.split('\n')[0]! + '\n'),
  fc.constant<Damage>(() => ''),
  fc.constant<Damage>(() => '\n\n\n'),
  // A header with other names or in another order.
  fc.constant<Damage>((s) => s.replace(/^[^\n]*/, (h) => h.split(',').reverse().join(','))),
  fc.constant<Damage>((s) => s.replace(/^[^\n]*/, (h) => h.toUpperCase().replace(/_/g, ' '))),
  // Random characters anywhere, including emoji and lone surrogates.
  fc
    .tuple(
      fc.double({ min: 0, max: 1, noNaN: true }),
      fc.string({ unit: 'binary', minLength: 1, maxLength: 8 }),
    )
    .map(
      ([w, junk]): Damage =>
        (s) =>
          insertAt(s, w, junk),
    ),
  fc.tuple(fc.double({ min: 0, max: 1, noNaN: true }), fc.constantFrom('\uD800', '🧵', 'ﷺ', '\u202E')).map(
    ([w, c]): Damage =>
      (s) =>
        insertAt(s, w, c),
  ),
  // Numbers as spreadsheets write them.
  fc.constantFrom('1,0', '1e3', '-1', '0x10', '１').map(
    (n): Damage =>
      (s) =>
        s.replace(/\n(\d+)/, `\n${n}`),
  ),
)

/** One to three damages, or none (the file as the server accepts it). */
const damaged = (base: () => string) =>
  fc
    .array(textDamage, { minLength: 0, maxLength: 3 })
    .map((damages) => damages.reduce((s, d) => d(s).slice(0, maxFileChars), base()))

/** How the bytes of the text go over the wire. */
const encodings = fc.constantFrom(
  { name: 'utf-8', contentType: 'text/csv', bytes: (s: string) => Buffer.from(s, 'utf8') },
  {
    name: 'utf-8 as text/plain',
    contentType: 'text/plain; charset=utf-8',
    bytes: (s: string) => Buffer.from(s, 'utf8'),
  },
  // Latin-1 bytes declared as UTF-8 (a spreadsheet's "CSV" export on an older machine).
  {
    name: 'latin-1 sent as utf-8',
    contentType: 'text/csv',
    bytes: (s: string) => Buffer.from(`${s}Café`, 'latin1'),
  },
  {
    name: 'latin-1 declared',
    contentType: 'text/csv; charset=latin1',
    bytes: (s: string) => Buffer.from(`${s}Café`, 'latin1'),
  },
  // UTF-16 with its BOM, declared or not.
  {
    name: 'utf-16le undeclared',
    contentType: 'text/csv',
    bytes: (s: string) => Buffer.concat([Buffer.from([0xff, 0xfe]), Buffer.from(s, 'utf16le')]),
  },
  {
    name: 'utf-16le declared',
    contentType: 'text/csv; charset=utf-16le',
    bytes: (s: string) => Buffer.from(s, 'utf16le'),
  },
  {
    name: 'unknown charset',
    contentType: 'text/csv; charset=x-corvell',
    bytes: (s: string) => Buffer.from(s),
  },
)

// ---- Checks ----------------------------------------------------------------------------------------

interface Details {
  row?: unknown
}

/** A documented success, or a refusal in the error shape whose row problems carry row numbers; nothing written then. */
function check(what: string, res: request.Response, ok: number[], rowCodes: string[]) {
  tally.requests += 1
  const status = { what, status: res.status }
  if (res.status >= 200 && res.status < 300) {
    expect({ ...status, documented: ok.includes(res.status) }).toEqual({ ...status, documented: true })
    tally.accepted += 1
    current = fingerprint(t.database)
    return
  }
  expect({ ...status, documented: [400, 413, 415, 422].includes(res.status) }).toEqual({
    ...status,
    documented: true,
  })
  expect(errorBodySchema.safeParse(res.body).success, JSON.stringify(res.body).slice(0, 300)).toBe(true)
  if (rowCodes.includes(res.body.error.code)) {
    const details = res.body.error.details as Details[]
    expect(Array.isArray(details) && details.length > 0, JSON.stringify(res.body).slice(0, 300)).toBe(true)
    for (const d of details)
      expect(Number.isInteger(d.row) && (d.row as number) >= 1, JSON.stringify(d)).toBe(true)
  }
  expect({ ...status, unchanged: unchangedSince(t.database, current) }).toEqual({
    ...status,
    unchanged: true,
  })
  current = {
    ...current,
    changes: t.database.sqlite.prepare('SELECT total_changes()').pluck().get() as number,
  }
  tally.refusals += 1
}

describe('fuzzing the uploads', () => {
  it('when the plan CSV is the closure’s own plan, then it is accepted as it is (the fuzz starts from a valid file)', async () => {
    const res = await request(t.app)
      .post(`/api/closures/${closureId}/plan/csv`)
      .set('Authorization', office)
      .set('Content-Type', 'text/csv')
      .send(planCsv)
    expect(res.status, JSON.stringify(res.body)).toBe(201)
    current = fingerprint(t.database)
  })

  // The fuzz found an empty body refused without details; a header-only and an unreadable file had the same gap.
  it.each([
    ['an empty body', 1, ''],
    ['only the header', 2, 'tray,slot,cable_a,fiber_a,cable_b,fiber_b\n'],
    [
      'an unclosed quote on row 3',
      3,
      'tray,slot,cable_a,fiber_a,cable_b,fiber_b\n1,1,A,1,B,2\n1,2,"A,1,B,3\n',
    ],
  ] as const)('when the plan CSV is %s, then the refusal names row %i', async (_what, row, text) => {
    const res = await request(t.app)
      .post(`/api/closures/${closureId}/plan/csv`)
      .set('Authorization', office)
      .set('Content-Type', 'text/csv')
      .send(text)
    check('plan csv regression', res, [], ['invalid_csv'])
    expect(res.body.error.code).toBe('invalid_csv')
    expect(res.body.error.details[0].row).toBe(row)
  })

  it('POST /api/closures/:closureId/plan/csv: broken files in any encoding', async () => {
    await fc.assert(
      fc.asyncProperty(
        damaged(() => planCsv),
        encodings,
        async (text, encoding) => {
          const res = await request(t.app)
            .post(`/api/closures/${closureId}/plan/csv`)
            .set('Authorization', office)
            .set('Content-Type', encoding.contentType)
            .send(encoding.bytes(text))
          check(`plan csv, ${encoding.name}`, res, [201], ['invalid_csv', 'invalid_plan'])
        },
      ),
      { numRuns: runs, seed, endOnFailure: true },
    )
  }, 120_000)

  it('when the OTDR template is imported, then it is accepted (the fuzz starts from a valid file)', async () => {
    const res = await request(t.app)
      .post(`/api/projects/${projectId}/otdr/imports`)
      .set('Authorization', office)
      .send({ files: [{ name: 'template.csv', text: otdrCsv }] })
    expect(res.status, JSON.stringify(res.body)).toBe(201)
    current = fingerprint(t.database)
  })

  it('POST /api/projects/:projectId/otdr/imports: broken files, decoded as a browser would', async () => {
    // The app reads each file as text in the browser; other encodings arrive as what UTF-8 makes of them.
    const decoded = fc
      .tuple(
        damaged(() => otdrCsv),
        encodings,
      )
      .map(([text, e]) => e.bytes(text).toString('utf8'))
    await fc.assert(
      fc.asyncProperty(fc.array(decoded, { minLength: 1, maxLength: 3 }), async (texts) => {
        const res = await request(t.app)
          .post(`/api/projects/${projectId}/otdr/imports`)
          .set('Authorization', office)
          .send({ files: texts.map((text, i) => ({ name: `trace-${i}.csv`, text })) })
        check('otdr csv', res, [200, 201], ['invalid_otdr_csv'])
      }),
      { numRuns: runs, seed, endOnFailure: true },
    )
  }, 120_000)

  it('PUT /api/photos/:sha256: damaged images, wrong types, right and wrong hashes', async () => {
    const images = fc.constantFrom(
      () => ({ type: 'image/jpeg', bytes: jpegBytes(64, 48, 64) }),
      () => ({ type: 'image/webp', bytes: webpBytes(64, 48, 64) }),
      () => ({ type: 'image/png', bytes: Buffer.from(iconPng) }),
    )
    const damage = fc.oneof(
      fc.constant((b: Buffer) => b),
      fc.integer({ min: 0, max: 40 }).map((n) => (b: Buffer) => b.subarray(0, n)),
      fc.integer({ min: 0, max: 12 }).map((i) => (b: Buffer) => {
        const out = Buffer.from(b)
        out[i] = out[i]! ^ 0xff
        return out
      }),
      fc.constant((b: Buffer) => Buffer.concat([Buffer.from('GIF89a'), b])),
      fc.constant((b: Buffer) => Buffer.from(b.toString('latin1'), 'utf8')),
      fc.constant((b: Buffer) => Buffer.concat([Buffer.from([0xef, 0xbb, 0xbf]), b])),
      fc.constant(() => Buffer.alloc(0)),
      fc.uint8Array({ minLength: 1, maxLength: 300 }).map((r) => () => Buffer.from(r)),
    )
    const declared = fc.oneof(
      { arbitrary: fc.constant<string | null>(null), weight: 3 },
      fc.constantFrom(
        'image/jpeg',
        'image/png',
        'image/webp',
        'image/gif',
        'text/csv',
        'image/jpeg; charset=utf-8',
      ),
    )
    await fc.assert(
      fc.asyncProperty(images, damage, declared, fc.boolean(), async (image, hurt, type, rightHash) => {
        const original = image()
        const bytes = hurt(original.bytes)
        const hash = rightHash
          ? createHash('sha256').update(bytes).digest('hex')
          : createHash('sha256').update(original.bytes).digest('hex')
        const filesBefore = storedFiles(t)
        const res = await request(t.app)
          .put(`/api/photos/${hash}`)
          .set('Authorization', splicer)
          .set('Content-Type', type ?? original.type)
          .send(bytes)
        check(`photo ${type ?? original.type}`, res, [200, 201], [])
        // No bytes are left behind: nothing in the temp folder, nothing new in the store unless stored.
        expect(tempFiles(t)).toEqual([])
        if (res.status >= 400) expect(storedFiles(t)).toEqual(filesBefore)
        if (res.status === 201 || res.status === 200) {
          // Stored only under the hash of the bytes that arrived, as the type they are.
          expect(rightHash || bytes.equals(original.bytes)).toBe(true)
          expect(res.body.mime).toBe(original.type)
          expect(res.body).toMatchObject({ sha256: hash, size: bytes.length })
        }
      }),
      { numRuns: runs, seed, endOnFailure: true },
    )
  }, 120_000)
})

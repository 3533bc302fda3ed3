import ExcelJS from 'exceljs'
import request from 'supertest'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { closeOutData, renderCloseOut } from '../../server/services/closeOut'
import { neutralise, toCsv } from '../../server/services/exports'
import { makeTestApp, type TestApp } from './support/app'
import { pdfText } from './support/pdf'

// TIA-598-C colour sequence, positions 1–12 (REFERENCE.md §1).
const tia598 = [
  'Blue',
  'Orange',
  'Green',
  'Brown',
  'Slate',
  'White',
  'Red',
  'Black',
  'Yellow',
  'Violet',
  'Rose',
  'Aqua',
]

let t: TestApp
let vault: { id: string; project_id: string }
let signedOff: { id: string }

const q = <T>(sql: string, ...params: unknown[]) => t.database.sqlite.prepare(sql).get(...params) as T
const all = <T>(sql: string, ...params: unknown[]) => t.database.sqlite.prepare(sql).all(...params) as T[]

function binary(res: request.Response, cb: (err: Error | null, body: Buffer) => void) {
  const chunks: Buffer[] = []
  res.on('data', (c: Buffer) => chunks.push(c))
  res.on('end', () => cb(null, Buffer.concat(chunks)))
}

async function xlsxOf(body: Buffer) {
  const wb = new ExcelJS.Workbook()
  await wb.xlsx.load(body as unknown as ArrayBuffer)
  return wb.worksheets[0]!
}

beforeAll(() => {
  t = makeTestApp()
  vault = q("SELECT id, project_id FROM closures WHERE label LIKE 'VLT-01%'")
  signedOff = q("SELECT id FROM closures WHERE label LIKE 'BLD-04%'")
  // A splice note typed as a formula must reach the sheet as text.
  t.database.sqlite
    .prepare(
      'UPDATE splices SET notes = \'=HYPERLINK("http://example.invalid","x")\' WHERE id = (SELECT id FROM splices WHERE closure_id = ? ORDER BY spliced_at LIMIT 1)',
    )
    .run(vault.id)
})
afterAll(() => t.close())

describe('neutralise', () => {
  it('when a text cell starts with = + - @ tab or CR, then it is prefixed with an apostrophe; numbers stay numbers', () => {
    for (const bad of ['=1+1', '+SUM(A1)', '-2+3', '@cmd', '\tx', '\ry'])
      expect(neutralise(bad)).toBe(`'${bad}`)
    expect(neutralise(-0.02)).toBe(-0.02)
    expect(neutralise('Blue')).toBe('Blue')
    expect(neutralise(null)).toBeNull()
    expect(toCsv({ name: 's', columns: [{ header: 'a', width: 1 }], rows: [['=x,"y"'], [-1]] })).toBe(
      'a\r\n"\'=x,""y"""\r\n-1\r\n',
    )
  })
})

describe('splice exports', () => {
  it('when the office exports a closure as XLSX, then every attempt is a row with colour names, flags and numbers as numbers', async () => {
    const res = await request(t.app)
      .get(`/api/closures/${vault.id}/export/splices?format=xlsx`)
      .set('Authorization', await t.tokenFor('office'))
      .buffer(true)
      .parse(binary)
    expect(res.status).toBe(200)
    expect(res.headers['content-disposition']).toBe('attachment; filename="splices-VLT-01-Weir-Road.xlsx"')
    const ws = await xlsxOf(res.body as Buffer)
    const header = (ws.getRow(1).values as unknown[]).slice(1)
    expect(header.slice(0, 7)).toEqual([
      'Closure',
      'Tray',
      'Slot',
      'Cable A',
      'Fiber A',
      'Tube/ribbon A',
      'Fiber colour A',
    ])
    const count = q<{ n: number }>(
      'SELECT count(*) AS n FROM splices WHERE closure_id = ? AND deleted = 0',
      vault.id,
    ).n
    expect(ws.rowCount - 1).toBe(count)
    const col = (name: string) => header.indexOf(name) + 1
    const cables = new Map(
      all<{ label: string; per: number; construction: string }>(
        'SELECT label, fibers_per_unit AS per, construction FROM cables',
      ).map((c) => [c.label, c]),
    )
    let formulaCells = 0
    for (let r = 2; r <= ws.rowCount; r += 1) {
      const row = ws.getRow(r)
      const fiber = row.getCell(col('Fiber A')).value as number
      const cable = cables.get(row.getCell(col('Cable A')).value as string)!
      expect(typeof fiber).toBe('number')
      expect(typeof row.getCell(col('Estimated loss (dB)')).value).toBe('number')
      if (cable.construction === 'loose_tube' && fiber <= cable.per * 12 && cable.per <= 12) {
        expect(row.getCell(col('Fiber colour A')).value).toBe(tia598[(fiber - 1) % cable.per])
        expect(row.getCell(col('Tube/ribbon A')).value).toBe(tia598[Math.floor((fiber - 1) / cable.per)])
      }
      const note = row.getCell(col('Notes')).value
      expect(typeof note === 'object' && note !== null && 'formula' in note).toBe(false)
      if (typeof note === 'string' && note.includes('HYPERLINK')) {
        expect(note.startsWith("'=HYPERLINK")).toBe(true)
        formulaCells += 1
      }
    }
    expect(formulaCells).toBe(1)
    const flagged = all<{ flags: string }>(
      "SELECT flags FROM splices WHERE closure_id = ? AND flags != '[]'",
      vault.id,
    )
    const sheetFlags = []
    for (let r = 2; r <= ws.rowCount; r += 1) {
      const v = ws.getRow(r).getCell(col('Flags')).value
      if (v) sheetFlags.push(v)
    }
    expect(sheetFlags.sort()).toEqual(flagged.map((f) => (JSON.parse(f.flags) as string[]).join(', ')).sort())
  })

  it('when a day is exported as CSV, then only that day is in it, the note is neutralised and losses read as numbers', async () => {
    const res = await request(t.app)
      .get(`/api/projects/${vault.project_id}/export/splices?format=csv&day=2025-06-10`)
      .set('Authorization', await t.tokenFor('office'))
    expect(res.status).toBe(200)
    expect(res.headers['content-type']).toMatch(/^text\/csv/)
    expect(res.headers['content-disposition']).toBe(
      'attachment; filename="splices-CVF-FTTH-01-2025-06-10.csv"',
    )
    const lines = (res.text as string).trimEnd().split('\r\n')
    const day = q<{ n: number }>(
      "SELECT count(*) AS n FROM splices WHERE substr(spliced_at,1,10) = '2025-06-10' AND deleted = 0",
    ).n
    expect(lines.length - 1).toBe(day)
    expect(res.text).toContain(`"'=HYPERLINK(""http://example.invalid"",""x"")"`)
    expect(lines.some((line) => /(^|,)=/.test(line))).toBe(false)
    const empty = await request(t.app)
      .get(`/api/projects/${vault.project_id}/export/splices?format=csv&day=2031-01-01`)
      .set('Authorization', await t.tokenFor('office'))
    expect(empty.text.trimEnd().split('\r\n')).toHaveLength(1)
  })

  it('when a foreman exports the project, then only their crew’s closures are in it; the inspector gets signed-off work only', async () => {
    const foreman = await request(t.app)
      .get(`/api/projects/${vault.project_id}/export/splices`)
      .set('Authorization', await t.tokenFor('foreman'))
    expect(foreman.status).toBe(200)
    expect(foreman.text).not.toContain('OTH-06')
    expect(foreman.text).toContain('VLT-01')
    const inspector = await request(t.app)
      .get(`/api/projects/${vault.project_id}/export/splices`)
      .set('Authorization', await t.tokenFor('inspector'))
    const labels = new Set(
      inspector.text
        .trimEnd()
        .split('\r\n')
        .slice(1)
        .map((l) => l.split(',')[0]),
    )
    expect([...labels]).toEqual(['BLD-04 Old Maltings'])
  })

  it('when the export format is unknown, then 400 with the error shape', async () => {
    const res = await request(t.app)
      .get(`/api/closures/${vault.id}/export/splices?format=ods`)
      .set('Authorization', await t.tokenFor('office'))
    expect(res.status).toBe(400)
    expect(res.body.error).toMatchObject({ code: expect.any(String), message: expect.any(String) })
  })

  it('when the board is exported, then each visible closure is a row with its maintained totals', async () => {
    const res = await request(t.app)
      .get(`/api/projects/${vault.project_id}/export/board`)
      .set('Authorization', await t.tokenFor('office'))
      .buffer(true)
      .parse(binary)
    expect(res.status).toBe(200)
    const ws = await xlsxOf(res.body as Buffer)
    const closures = all<{ label: string; planned: number }>(
      `SELECT c.label, t.planned FROM closures c JOIN closure_totals t ON t.closure_id = c.id WHERE c.deleted = 0 ORDER BY c.label`,
    )
    expect(ws.rowCount - 1).toBe(closures.length)
    const labels = []
    for (let r = 2; r <= ws.rowCount; r += 1) {
      labels.push(ws.getRow(r).getCell(1).value)
      const want = closures.find((c) => c.label === ws.getRow(r).getCell(1).value)!
      expect(ws.getRow(r).getCell(5).value).toBe(want.planned)
    }
    expect(labels.sort()).toEqual(closures.map((c) => c.label).sort())
  })
})

describe('close-out report', () => {
  it('when a signed-off closure’s report is built, then the PDF names the closure, its roll-up, the estimate labels and the footer', async () => {
    const res = await request(t.app)
      .get(`/api/closures/${signedOff.id}/close-out`)
      .set('Authorization', await t.tokenFor('inspector'))
      .buffer(true)
      .parse(binary)
    expect(res.status).toBe(200)
    expect(res.headers['content-type']).toBe('application/pdf')
    expect(res.headers['content-disposition']).toBe(
      'attachment; filename="close-out-BLD-04-Old-Maltings.pdf"',
    )
    const text = await pdfText(res.body as Buffer)
    expect(text).toContain('Close-out report — BLD-04 Old Maltings')
    // Roll-up computed here from the rows: current attempts, their summed estimate, the planned rows.
    const current = all<{ loss_db: number }>(
      'SELECT loss_db FROM splices WHERE closure_id = ? AND is_current = 1 AND deleted = 0',
      signedOff.id,
    )
    const total = current.reduce((sum, s) => sum + Math.round(s.loss_db * 1000), 0) / 1000
    const max = Math.max(...current.map((s) => s.loss_db))
    const planned = q<{ n: number }>(
      'SELECT count(*) AS n FROM plan_rows WHERE closure_id = ? AND deleted = 0',
      signedOff.id,
    ).n
    const resplices = q<{ n: number }>(
      'SELECT count(*) AS n FROM splices WHERE closure_id = ? AND is_current = 0 AND deleted = 0',
      signedOff.id,
    ).n
    expect(text).toContain(`Planned splices: ${planned}`)
    expect(text).toContain(`Total estimated loss: ${total.toFixed(3)} dB`)
    expect(text).toContain(`Max estimated loss: ${max.toFixed(3)} dB`)
    expect(text).toContain(`Re-splices: ${resplices}`)
    expect(text).toContain('Measured (OTDR avg)')
    expect(text).toContain('not measured')
    expect(text).toMatch(/Signed off by .+ at 20/)
    expect(text).toContain('Estimated values are the splicer’s fusion-splicer estimates')
    expect(text).toContain('Acceptance follows the project’s contract and applicable standards')
    expect(text).toContain(tia598[0])
  })

  it('when OTDR results are given for a splice, then its measured value appears beside the estimate', async () => {
    const splice = q<{ id: string }>(
      'SELECT id FROM splices WHERE closure_id = ? AND is_current = 1 ORDER BY slot LIMIT 1',
      signedOff.id,
    )
    const office = { id: 'x', email: 'o@x', name: 'Office', role: 'office' as const, crewId: null }
    const measured = new Map([
      [splice.id, [{ wavelengthNm: 1550, averageDb: 0.043, flags: ['one_way_only'] }]],
    ])
    const data = await closeOutData(t.ctx, office, signedOff.id, { measured })
    const text = await pdfText(await renderCloseOut(data))
    expect(text).toContain('1550 nm: 0.043 dB (one_way_only)')
  })

  it('when the inspector asks for a closure that is not signed off, then 404 as for a missing one', async () => {
    const res = await request(t.app)
      .get(`/api/closures/${vault.id}/close-out`)
      .set('Authorization', await t.tokenFor('inspector'))
    expect(res.status).toBe(404)
    expect(res.body.error.code).toBe('not_found')
  })
})

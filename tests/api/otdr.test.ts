import request from 'supertest'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { fiberPathSchema, reconciliationSchema } from '#shared/schemas/otdr'
import { measuredForSplices } from '../../server/services/otdrResults'
import { makeTestApp, tableCounts, type TestApp } from './support/app'

let t: TestApp
let projectId: string
const header =
  'cable,fiber,from_end,wavelength_nm,fiber_length_m,end_to_end_db,distance_m,loss_db,reflectance_db,kind'
const cable = 'TR-864-A Hub to Weir Road'

beforeAll(() => {
  t = makeTestApp()
  projectId = t.database.sqlite.prepare('SELECT id FROM projects').pluck().get() as string
})
afterAll(() => t.close())

const send = async (files: { name: string; text: string }[]) =>
  request(t.app)
    .post(`/api/projects/${projectId}/otdr/imports`)
    .set('Authorization', await t.tokenFor('office'))
    .send({ files })

describe('OTDR import', () => {
  it('when a file has bad rows, then each is reported with its file and row and nothing is written', async () => {
    await t.tokenFor('office')
    const before = tableCounts(t.database)
    const good = `${header}\n${cable},2,A,1550,1636,,1241,0.05,,splice\n`
    const bad = `${header}\n${cable},1,A,1550,1636,,1240,0.05,,splice\n${cable},1,C,1550,1636,,1240,0.05,,splice\nNo such cable,1,A,1550,1636,,1240,0.05,,splice\n${cable},1,A,1550,1636,,abc,0.05,,splice\n`
    const res = await send([
      { name: 'good.csv', text: good },
      { name: 'bad.csv', text: bad },
    ])
    expect(res.status).toBe(400)
    expect(res.body.error.code).toBe('invalid_otdr_csv')
    const rows = (res.body.error.details as { file: string; row: number; field: string }[]).map((p) => [
      p.file,
      p.row,
      p.field,
    ])
    expect(rows).toEqual([
      ['bad.csv', 3, 'from_end'],
      ['bad.csv', 5, 'distance_m'],
      ['bad.csv', 4, 'cable'],
    ])
    expect(tableCounts(t.database)).toEqual(before)
  })

  it('when both ends of a fiber are imported, then the splice at VLT-01 gets the bidirectional average and a bend is placed on the route', async () => {
    // Path TR-864-A fiber 1 (0–1240 m) → TR-864-B fiber 1 (1240–1636 m); the vault splice is 1240 m from A.
    const text = [
      header,
      `${cable},1,A,1550,1636,0.9,0,0.3,-50,connector`,
      `${cable},1,A,1550,1636,0.9,800,0.12,,bend`,
      `${cable},1,A,1550,1636,0.9,1243,0.2,,splice`,
      `${cable},1,A,1550,1636,0.9,1636,,-14,end`,
      // From B the same splice shows at 1636 − 1240 = 396 m (REFERENCE.md §3); 0.20 and 0.10 average 0.15 (published worked example).
      `${cable},1,B,1550,1636,0.95,396.5,0.1,,splice`,
      '',
    ].join('\n')
    const res = await send([{ name: 'vault-f1.csv', text }])
    expect(res.status).toBe(201)
    expect(res.body.files[0]).toMatchObject({ status: 'imported', traces: 2, events: 5, unmatched: 1 })
    const splice = t.database.sqlite
      .prepare(
        `SELECT s.id FROM splices s JOIN closures c ON c.id = s.closure_id JOIN cables k ON k.id = s.cable_a_id
          WHERE c.label LIKE 'VLT-01%' AND k.label = ? AND s.fiber_a = 1 AND s.is_current = 1`,
      )
      .pluck()
      .get(cable) as string
    const measured = measuredForSplices(t.database.sqlite, [splice]).get(splice)!
    expect(measured).toHaveLength(1)
    expect(measured[0]!.wavelengthNm).toBe(1550)
    expect(measured[0]!.averageDb).toBeCloseTo(0.15, 9)
    expect(measured[0]!.flags).toContain('measured_over_target')
    const bend = t.database.sqlite
      .prepare(
        `SELECT e.route_position_m AS at, e.after_closure_id AS after, b.label AS before FROM otdr_events e
           LEFT JOIN closures b ON b.id = e.before_closure_id JOIN otdr_traces t ON t.id = e.trace_id
          WHERE e.match = 'unmatched' AND t.import_id = ?`,
      )
      .get(res.body.files[0].importId) as { at: number; after: string | null; before: string }
    expect(bend).toEqual({ at: 800, after: null, before: 'VLT-01 Weir Road' })

    const view = await request(t.app)
      .get(
        `/api/closures/${t.database.sqlite.prepare("SELECT id FROM closures WHERE label LIKE 'VLT-01%'").pluck().get() as string}/reconciliation`,
      )
      .set('Authorization', await t.tokenFor('foreman'))
    expect(view.status).toBe(200)
    expect(() => reconciliationSchema.parse(view.body)).not.toThrow()
    const row = (
      view.body.splices as {
        id: string
        measured: { averageDb: number; flags: string[] }[]
        untested: number[]
      }[]
    ).find((s) => s.id === splice)!
    expect(row.measured[0]!.averageDb).toBeCloseTo(0.15, 9)
    expect(row.untested).toEqual([1310])
    // The demo's own shots (db/seed-otdr.ts) are on this closure too: only this file's bend is looked at here.
    expect(
      view.body.unmatched.filter((e: { fileName: string }) => e.fileName === 'vault-f1.csv'),
    ).toHaveLength(1)
    const untested = (view.body.splices as { untested: number[] }[]).filter(
      (s) => s.untested.length > 0,
    ).length
    expect(view.body.counts.untested).toBe(untested)
    expect(untested).toBeGreaterThan(0)

    const cableId = t.database.sqlite
      .prepare('SELECT id FROM cables WHERE label = ?')
      .pluck()
      .get(cable) as string
    const path = await request(t.app)
      .get(`/api/projects/${projectId}/fiber-path`)
      .query({ cableId, fiber: 1 })
      .set('Authorization', await t.tokenFor('office'))
    expect(path.status).toBe(200)
    expect(() => fiberPathSchema.parse(path.body)).not.toThrow()
    expect(path.body.lengthM).toBe(1636)
    expect(path.body.aEnd).toEqual({ kind: 'terminal' })
    expect(path.body.bEnd.kind).toBe('dead_end')
    const b1550 = path.body.budgets.find((b: { wavelengthNm: number }) => b.wavelengthNm === 1550)
    // The default allowances, each as REFERENCE.md §2 gives it: 1.636 km × 0.5 dB/km (single-mode outside plant,
    // ANSI/TIA-568.3-D — from memory) + 1 splice × 0.3 dB (ANSI/TIA-568.3-D 2016 — from memory; ISO/IEC 11801 the
    // same) + 1 mated connector pair × 0.75 dB (ANSI/TIA-568.3-D 2016), summed as in §5 (ITU-T G.652 Appendix I).
    // The §5 worked example (10 km at 1310 nm → 7.51 dB) runs through linkLoss in tests/unit/shared/budget.test.ts.
    expect(b1550.allowedDb).toBeCloseTo(0.818 + 0.3 + 0.75, 9)
    expect(b1550.allowances).toMatchObject({
      attenuationDbPerKm: { value: 0.5, source: expect.stringContaining('from memory') },
      spliceLossDb: { value: 0.3, source: expect.stringContaining('from memory') },
      connectorPairLossDb: { value: 0.75, source: 'ANSI/TIA-568.3-D (2016), mated connector pair' },
    })
    expect(b1550.splices[0]).toMatchObject({ source: 'measured', lossDb: expect.closeTo(0.15, 9) })
    expect(b1550.marginDb).toBeCloseTo(0.15, 9)
    expect(b1550.measuredEndToEndDb).toBeCloseTo(0.925, 9)

    // The same bytes again change nothing.
    const counts = tableCounts(t.database)
    const again = await send([{ name: 'renamed.csv', text }])
    expect(again.status).toBe(200)
    expect(again.body.files[0]).toMatchObject({ status: 'unchanged', importId: res.body.files[0].importId })
    expect(tableCounts(t.database)).toEqual(counts)
    // So does the same file saved again by a spreadsheet on another system (a BOM, CRLF line endings).
    const resaved = await send([{ name: 'resaved.csv', text: `\uFEFF${text.replace(/\r?\n/g, '\r\n')}` }])
    expect(resaved.status).toBe(200)
    expect(resaved.body.files[0]).toMatchObject({ status: 'unchanged', importId: res.body.files[0].importId })
    expect(tableCounts(t.database)).toEqual(counts)
  })

  it('when the template is asked for, then it is CSV with the documented header', async () => {
    const res = await request(t.app)
      .get(`/api/projects/${projectId}/otdr/template`)
      .set('Authorization', await t.tokenFor('office'))
    expect(res.status).toBe(200)
    expect(res.text.split('\n')[0]).toBe(header)
  })
})

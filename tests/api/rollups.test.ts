import request from 'supertest'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { productionByDay, rollUpClosure } from '#shared/domain/rollup'
import type { ProjectLimits } from '#shared/schemas/index'
import { makeTestApp, type TestApp } from './support/app'

// The server keeps closure totals incrementally in SQL; the phone computes them with the shared domain
// functions. On the seeded scenario both must agree to the thousandth of a dB.

let t: TestApp
let office: string
beforeAll(async () => {
  t = makeTestApp()
  office = await t.tokenFor('office')
})
afterAll(() => t.close())

const all = <T>(sql: string, ...params: unknown[]) => t.database.sqlite.prepare(sql).all(...params) as T[]

function spliceRows(closureId: string) {
  return all<Record<string, unknown>>(
    'SELECT * FROM splices WHERE closure_id = ? AND deleted = 0',
    closureId,
  ).map((s) => ({
    id: s.id as string,
    trayId: s.tray_id as string,
    slot: s.slot as number,
    cableAId: s.cable_a_id as string,
    fiberA: s.fiber_a as number,
    cableBId: s.cable_b_id as string,
    fiberB: s.fiber_b as number,
    lossDb: s.loss_db as number | null,
    attempt: s.attempt as number,
    acceptReason: s.accept_reason as string | null,
    supersedesId: s.supersedes_id as string | null,
    splicerId: s.splicer_id as string,
    splicedAt: s.spliced_at as string,
  }))
}

function planRows(closureId: string) {
  return all<Record<string, unknown>>(
    'SELECT * FROM plan_rows WHERE closure_id = ? AND deleted = 0',
    closureId,
  ).map((r) => ({
    trayId: r.tray_id as string,
    slot: r.slot as number,
    cableAId: r.cable_a_id as string,
    fiberA: r.fiber_a as number,
    cableBId: r.cable_b_id as string,
    fiberB: r.fiber_b as number,
  }))
}

describe('roll-ups on the seeded scenario', () => {
  it('when each closure is rolled up by the API, then it equals the shared rollUpClosure', async () => {
    const project = all<{ id: string; limits: string }>('SELECT id, limits FROM projects')[0]!
    const limits = JSON.parse(project.limits) as ProjectLimits
    const closures = all<{ id: string; label: string }>('SELECT id, label FROM closures WHERE deleted = 0')
    expect(closures.length).toBeGreaterThanOrEqual(6)
    let withSplices = 0
    for (const closure of closures) {
      const splices = spliceRows(closure.id)
      if (splices.length) withSplices += 1
      const photoCounts = Object.fromEntries(
        all<{ entity_id: string; n: number }>(
          "SELECT entity_id, count(*) AS n FROM photo_links WHERE entity = 'splice' AND deleted = 0 GROUP BY entity_id",
        ).map((r) => [r.entity_id, r.n]),
      )
      const expected = rollUpClosure(planRows(closure.id), splices, limits, {
        photoCounts: { perSplice: photoCounts },
      })
      const res = await request(t.app).get(`/api/closures/${closure.id}/rollup`).set('Authorization', office)
      expect(res.status).toBe(200)
      const got = res.body
      expect({
        label: closure.label,
        planned: got.planned,
        logged: got.logged,
        offPlan: got.offPlan,
        mismatches: got.mismatches,
      }).toEqual({
        label: closure.label,
        planned: expected.planned,
        logged: expected.logged,
        offPlan: expected.offPlan,
        mismatches: expected.mismatches,
      })
      expect(got.completionPct).toBeCloseTo(expected.completionPct, 5)
      expect(got.resplices).toBe(expected.resplices)
      expect(got.overTarget).toBe(expected.overTarget)
      expect(got.overMaximum).toBe(expected.overMaximum)
      expect(got.photos).toBe(expected.photos)
      expect(got.lossSum).toBeCloseTo(expected.totalLossDb, 3)
      if (expected.maxLossDb === null) expect(got.lossMax).toBeNull()
      else expect(got.lossMax).toBeCloseTo(expected.maxLossDb, 3)
      if (expected.meanLossDb === null) expect(got.lossMean).toBeNull()
      else expect(got.lossMean).toBeCloseTo(expected.meanLossDb, 3)
    }
    expect(withSplices).toBeGreaterThanOrEqual(3)
  })

  it('when the board is read, then its totals are the closures’ roll-ups', async () => {
    const project = all<{ id: string }>('SELECT id FROM projects')[0]!
    const board = await request(t.app)
      .get(`/api/projects/${project.id}/board?limit=100&sort=completion&dir=desc`)
      .set('Authorization', office)
    expect(board.status).toBe(200)
    expect(board.body.total).toBe(board.body.items.length)
    const completions = board.body.items.map((i: { completionPct: number }) => i.completionPct)
    expect(completions).toEqual([...completions].sort((a, b) => b - a))
    for (const item of board.body.items) {
      const one = await request(t.app).get(`/api/closures/${item.id}/rollup`).set('Authorization', office)
      expect({ id: item.id, logged: item.logged, overTarget: item.overTarget }).toEqual({
        id: item.id,
        logged: one.body.logged,
        overTarget: one.body.overTarget,
      })
    }
  })

  it('when the day’s production is asked for, then it equals the shared productionByDay', async () => {
    const project = all<{ id: string; limits: string }>('SELECT id, limits FROM projects')[0]!
    const limits = JSON.parse(project.limits) as ProjectLimits
    const splices = all<{ id: string }>('SELECT id FROM closures').flatMap((c) => spliceRows(c.id))
    const days = [...new Set(splices.map((s) => s.splicedAt.slice(0, 10)))].sort()
    expect(days.length).toBeGreaterThan(0)
    const res = await request(t.app)
      .get(`/api/projects/${project.id}/production?from=${days[0]}&to=${days.at(-1)}`)
      .set('Authorization', office)
    expect(res.status).toBe(200)
    const expected = productionByDay(splices, { timeZoneOffsetMinutes: 0, limits })
    const got = res.body.items.map(
      (r: { day: string; splicerId: string; splices: number; resplices: number; overTarget: number }) => ({
        day: r.day,
        splicerId: r.splicerId,
        splices: r.splices,
        resplices: r.resplices,
        overTarget: r.overTarget,
      }),
    )
    const key = (r: { day: string; splicerId: string }) => `${r.day} ${r.splicerId}`
    expect([...got].sort((a, b) => key(a).localeCompare(key(b)))).toEqual(
      [...expected].sort((a, b) => key(a).localeCompare(key(b))),
    )
  })
})

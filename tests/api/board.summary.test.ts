import request from 'supertest'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { boardPageSchema, lossBinCount, type BoardItem } from '#shared/schemas/index'
import { makeTestApp, type TestApp } from './support/app'

// The board's summary must be the roll-up of exactly the closures its filters match, from the same totals
// the rows carry: recomputed here from every row of an unpaged board read.

let t: TestApp
let office: string
let projectId: string
beforeAll(async () => {
  t = makeTestApp()
  office = await t.tokenFor('office')
  projectId = (t.database.sqlite.prepare('SELECT id FROM projects').get() as { id: string }).id
})
afterAll(() => t.close())

function expectedSummary(items: BoardItem[]) {
  const bins = Array.from({ length: lossBinCount + 1 }, () => 0)
  const byCompletion: Record<string, number> = { no_plan: 0, '0': 0, '1-49': 0, '50-99': 0, '100': 0 }
  const byState: Record<string, number> = { planned: 0, in_progress: 0, signed_off: 0, reopened: 0 }
  let noLoss = 0
  for (const item of items) {
    byState[item.state]! += 1
    const band =
      item.planned === 0
        ? 'no_plan'
        : item.logged === 0
          ? '0'
          : item.logged * 2 < item.planned
            ? '1-49'
            : item.logged < item.planned
              ? '50-99'
              : '100'
    byCompletion[band]! += 1
    if (item.lossMean === null) noLoss += 1
    else bins[Math.min(lossBinCount, Math.max(0, Math.floor(Math.round(item.lossMean * 1000) / 20)))]! += 1
  }
  return {
    closures: items.length,
    planned: items.reduce((n, i) => n + i.planned, 0),
    logged: items.reduce((n, i) => n + i.logged, 0),
    overTarget: items.reduce((n, i) => n + i.overTarget, 0),
    byState,
    byCompletion,
    meanLossBins: bins,
    noLoss,
  }
}

async function board(query: string) {
  const res = await request(t.app)
    .get(`/api/projects/${projectId}/board?${query}`)
    .set('Authorization', office)
  expect(res.status).toBe(200)
  return boardPageSchema.parse(res.body)
}

describe('the project board summary', () => {
  it('when the board is read with summary=true, then the summary rolls up every matching closure, not only the page', async () => {
    const all = await board('limit=500')
    expect(all.summary).toBeUndefined()
    expect(all.items.some((i) => i.lossMean !== null)).toBe(true)
    const paged = await board('limit=2&summary=true&sort=completion&dir=desc')
    expect(paged.items).toHaveLength(2)
    expect(paged.summary).toEqual(expectedSummary(all.items))
    expect(paged.summary!.closures).toBe(paged.total)
  })

  it('when the board is filtered, then the summary follows the same filters', async () => {
    const all = await board('limit=500')
    const state = all.items.find((i) => i.logged > 0)!.state
    const filtered = await board(`limit=1&summary=true&state=${state}`)
    expect(filtered.summary).toEqual(expectedSummary(all.items.filter((i) => i.state === state)))
    const label = all.items[0]!.label.slice(0, 3)
    const byText = await board(`limit=1&summary=true&q=${encodeURIComponent(label)}`)
    const matching = all.items.filter((i) => i.label.toLowerCase().includes(label.toLowerCase()))
    expect(byText.summary).toEqual(expectedSummary(matching))
  })

  it('when summary is not true or false, then the board answers 400 in the error shape', async () => {
    const res = await request(t.app)
      .get(`/api/projects/${projectId}/board?summary=yes`)
      .set('Authorization', office)
    expect(res.status).toBe(400)
    expect(res.body.error.code).toBe('invalid_input')
    expect(res.body.error.details[0].path).toBe('summary')
  })
})

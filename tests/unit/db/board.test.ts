import { v7 } from 'uuid'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { writeTransaction } from '#db/client'
import { crews } from '#db/schema/index'
import type { ClosureState } from '#shared/schemas/enums'
import {
  type BoardItem,
  type BoardQuery,
  boardSorts,
  closureRollup,
  explainProjectBoard,
  projectBoard,
} from '../../../server/repositories/board'
import { insertSplice, recomputeClosureTotals } from '../../../server/repositories/splices'
import {
  addClosure,
  addPlanRow,
  addTray,
  buildProject,
  type ClosureFixture,
  freshDatabase,
  type TestDatabase,
  testLimits,
} from './support'

let database: TestDatabase
let fixture: ClosureFixture
let otherCrew: string
const states: ClosureState[] = ['planned', 'in_progress', 'signed_off', 'reopened']

// 29 more closures beside the fixture's, with planned counts, splices, crews and states varied by index;
// one is tombstoned and must never show.
beforeAll(() => {
  database = freshDatabase()
  fixture = buildProject(database, { trays: [4] })
  otherCrew = v7()
  writeTransaction(database.sqlite, (serverSeq) => {
    database.db.insert(crews).values({ id: otherCrew, name: 'Other crew', serverSeq }).run()
    for (let i = 1; i <= 29; i += 1) {
      const closureId = addClosure(
        database,
        {
          projectId: fixture.projectId,
          crewId: i % 3 === 0 ? otherCrew : fixture.crewId,
          label: i === 7 ? 'HH_07 Kiln%Street' : `CL-${String(i + 1).padStart(2, '0')}`,
          state: states[i % 4],
          routePositionM: i % 5 === 0 ? null : 1000 - i * 10,
          deleted: i === 13,
        },
        serverSeq,
      )
      const trayId = addTray(database, closureId, 1, 12, serverSeq)
      const planned = 2 + (i % 4)
      for (let slot = 1; slot <= planned; slot += 1) {
        addPlanRow(
          database,
          {
            closureId,
            trayId,
            slot,
            cableAId: fixture.cableA,
            fiberA: slot,
            cableBId: fixture.cableB,
            fiberB: slot,
          },
          serverSeq,
        )
      }
      recomputeClosureTotals(database.sqlite, closureId, testLimits)
      for (let slot = 1; slot <= i % 5; slot += 1) {
        insertSplice(
          database.sqlite,
          {
            id: v7(),
            closureId,
            trayId,
            slot,
            cableAId: fixture.cableA,
            fiberA: slot,
            cableBId: fixture.cableB,
            fiberB: slot,
            method: 'single_fusion',
            lossDb: slot === 2 ? 0.15 : 0.02,
            splicedAt: '2025-06-10T08:00:00.000Z',
            splicerId: fixture.userId,
            clientId: 'board-test',
            createdAt: new Date(Date.UTC(2025, 5, 10, 6, i)).toISOString(),
          },
          { serverSeq, limits: testLimits },
        )
      }
    }
  })
})
afterAll(() => database.close())

const board = (query: Partial<BoardQuery> = {}) =>
  projectBoard(database.db, fixture.projectId, { limit: 100, offset: 0, sort: 'label', dir: 'asc', ...query })

function isSorted(
  items: BoardItem[],
  key: (item: BoardItem) => number | string,
  dir: 'asc' | 'desc',
): boolean {
  return items.every((item, i) => {
    if (i === 0) return true
    const a = key(items[i - 1] as BoardItem)
    const b = key(item)
    return dir === 'asc' ? a <= b : a >= b
  })
}

describe('project board', () => {
  it('lists every live closure of the project with its totals, and counts them', () => {
    const { items, total } = board()
    expect(total).toBe(29)
    expect(items).toHaveLength(29)
    expect(items.some((item) => item.id === fixture.closureId)).toBe(true)
    const sample = items.find((item) => item.label === 'CL-05')!
    expect(sample).toMatchObject({
      planned: 2 + (4 % 4),
      logged: 2,
      completionPct: 100,
      overTarget: 1,
      lossMax: 0.15,
    })
  })

  it.each([
    ['label', (item: BoardItem) => item.label],
    ['completion', (item: BoardItem) => item.completionPct],
    ['overTarget', (item: BoardItem) => item.overTarget],
    // SQLite puts nulls first when ascending.
    ['lastActivity', (item: BoardItem) => item.lastActivityAt ?? ''],
    ['routePosition', (item: BoardItem) => item.routePositionM ?? -Infinity],
  ] as const)('when sorted by %s, then pages come in order both ways', (sort, key) => {
    for (const dir of ['asc', 'desc'] as const) {
      expect(isSorted(board({ sort, dir }).items, key, dir), `${sort} ${dir}`).toBe(true)
    }
  })

  it('when paged, then the pages put together are the whole list, each closure once', () => {
    for (const sort of boardSorts) {
      const whole = board({ sort, dir: 'desc' }).items.map((item) => item.id)
      const paged: string[] = []
      for (let offset = 0; offset < 40; offset += 7) {
        const page = board({ sort, dir: 'desc', limit: 7, offset })
        expect(page.total).toBe(29)
        paged.push(...page.items.map((item) => item.id))
      }
      expect(paged).toEqual(whole)
    }
  })

  it('filters by state, crew and label text, and counts what the filter leaves', () => {
    const signedOff = board({ state: 'signed_off' })
    expect(signedOff.items.every((item) => item.state === 'signed_off')).toBe(true)
    expect(signedOff.total).toBe(signedOff.items.length)
    expect(signedOff.total).toBeGreaterThan(0)

    const other = board({ crewId: otherCrew, state: 'in_progress' })
    expect(other.items.every((item) => item.crewId === otherCrew && item.state === 'in_progress')).toBe(true)
    expect(other.total).toBe(other.items.length)

    expect(board({ q: 'kiln%' }).items.map((item) => item.label)).toEqual(['HH_07 Kiln%Street'])
    // LIKE wildcards in the search text are taken literally.
    expect(board({ q: '_' }).items.map((item) => item.label)).toEqual(['HH_07 Kiln%Street'])
    expect(board({ q: '%' }).total).toBe(1)
    expect(board({ q: 'cl-1' }).total).toBe(9)
  })

  it('never shows a tombstoned closure or another project', () => {
    const labels = board().items.map((item) => item.label)
    expect(labels).not.toContain('CL-14')
    const elsewhere = buildProject(database)
    expect(
      projectBoard(database.db, elsewhere.projectId, {
        limit: 50,
        offset: 0,
        sort: 'label',
        dir: 'asc',
      }).items.map((i) => i.id),
    ).toEqual([elsewhere.closureId])
  })

  it('walks an index for every sort instead of sorting the whole project', () => {
    for (const sort of boardSorts) {
      for (const dir of ['asc', 'desc'] as const) {
        const plan = explainProjectBoard(database.db, fixture.projectId, { limit: 50, offset: 0, sort, dir })
        expect(plan.join(' / '), `${sort} ${dir}`).not.toMatch(/TEMP B-TREE/)
      }
    }
  })

  it('gives one closure roll-up, or nothing for an unknown id', () => {
    const item = board({ q: 'CL-05' }).items[0]!
    expect(closureRollup(database.db, item.id)).toMatchObject({
      closureId: item.id,
      projectId: fixture.projectId,
      planned: item.planned,
      logged: item.logged,
      lossMean: 0.0525,
    })
    expect(closureRollup(database.db, 'nope')).toBeUndefined()
  })
})

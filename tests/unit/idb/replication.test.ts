import { describe, expect, it } from 'vitest'
import type { Change, PullResponse } from '#shared/schemas/sync'
import { deviceMeta } from '@/idb/db'
import { overwrittenList, rejectedList } from '@/idb/reads'
import { applyPull, settleResults } from '@/idb/replication'
import type { SpliceRow } from '@/idb/schema'
import { editSplice, logSplice } from '@/idb/writes'
import { ids } from '../shared/builders'
import { buildClosureRow, freshDb, seedClosure, spliceArgs } from './support'

function page(changes: Change[], cursor: number, hasMore = false): PullResponse {
  return { changes, cursor, hasMore, lastMutationSeq: 0 }
}

function spliceChange(row: Partial<SpliceRow> & { id: string }, serverSeq: number): Change {
  const full = { ...spliceArgs(1), isCurrent: true, flags: [], reviewState: null, createdAt: 'x', ...row }
  return {
    table: 'splices',
    id: row.id,
    serverSeq,
    deleted: false,
    row: { ...full, serverSeq, deleted: false },
  }
}

describe('applying a pull page', () => {
  it('when a page arrives, then its rows and cursor are stored, and the cursor never moves backwards', async () => {
    const db = await freshDb()
    const closure = buildClosureRow({ serverSeq: 4 })
    const assignment = {
      closureId: ids.closure,
      userId: ids.splicer,
      position: 1,
      assignedBy: ids.otherSplicer,
    }
    const result = await applyPull(
      db,
      page(
        [
          { table: 'closures', id: closure.id, serverSeq: 4, deleted: false, row: { ...closure } },
          {
            table: 'closureAssignments',
            id: `${ids.closure}:${ids.splicer}`,
            serverSeq: 5,
            deleted: false,
            row: { ...assignment, assignedAt: '2025-03-14T07:00:00Z', serverSeq: 5, deleted: false },
          },
        ],
        5,
      ),
    )
    expect(result).toEqual({ applied: 2, cursor: 5 })
    expect(await db.closures.get(ids.closure)).toEqual(closure)
    expect(await db.closureAssignments.get(`${ids.closure}:${ids.splicer}`)).toMatchObject(assignment)

    await applyPull(db, page([], 3))
    expect((await deviceMeta(db)).cursor).toBe(5)
  })

  it('when a tombstone arrives, then the row stays, marked deleted; an older change never undoes a newer one', async () => {
    const db = await freshDb()
    await seedClosure(db)
    const row = spliceChange({ id: spliceArgs(1).id }, 6)
    await applyPull(db, page([row], 6))
    await applyPull(db, page([{ table: 'splices', id: row.id, serverSeq: 8, deleted: true, row: null }], 8))
    expect(await db.splices.get(row.id)).toMatchObject({ deleted: true, serverSeq: 8 })

    await applyPull(db, page([{ ...row, serverSeq: 6 }], 8))
    expect(await db.splices.get(row.id)).toMatchObject({ deleted: true, serverSeq: 8 })
  })

  it('when a closure leaves the user’s scope (tombstone without a row), then it and all under it leave the device', async () => {
    const db = await freshDb()
    await seedClosure(db)
    const row = spliceChange({ id: spliceArgs(1).id }, 6)
    await applyPull(db, page([row], 6))
    expect(await db.trays.where('closureId').equals(ids.closure).count()).toBeGreaterThan(0)
    await applyPull(
      db,
      page([{ table: 'closures', id: ids.closure, serverSeq: 9, deleted: true, row: null }], 9),
    )
    expect(await db.closures.get(ids.closure)).toBeUndefined()
    expect(await db.trays.where('closureId').equals(ids.closure).count()).toBe(0)
    expect(await db.splices.where('closureId').equals(ids.closure).count()).toBe(0)
    expect((await deviceMeta(db)).cursor).toBe(9)
  })

  it('when a pulled row covers a record with a pending local edit, then the local edit stays visible', async () => {
    const db = await freshDb()
    await seedClosure(db)
    const id = spliceArgs(1).id
    await applyPull(db, page([spliceChange({ id, lossDb: 0.2, notes: '' }, 3)], 3))
    await editSplice(db, id, { lossDb: 0.05 })

    // Someone else's note arrives for the same splice before our edit is pushed.
    await applyPull(db, page([spliceChange({ id, lossDb: 0.2, notes: 'checked by foreman' }, 9)], 9))
    expect(await db.splices.get(id)).toMatchObject({
      lossDb: 0.05,
      notes: 'checked by foreman',
      serverSeq: 9,
    })
    const [entry] = await db.outbox.toArray()
    expect(entry?.before[0]?.row).toMatchObject({ lossDb: 0.2, notes: 'checked by foreman' })
  })
})

describe('settling push results', () => {
  it('when the server answers applied, merged or duplicate, then those entries leave the outbox', async () => {
    const db = await freshDb()
    await seedClosure(db)
    for (let n = 1; n <= 4; n++) await logSplice(db, spliceArgs(n))
    const overwritten = [
      { field: 'lossDb', yours: 0.02, kept: 0.03, byUserId: ids.otherSplicer, byName: 'Ann' },
    ]
    const outcome = await settleResults(
      db,
      [{ seq: 1 }, { seq: 2 }, { seq: 3 }, { seq: 4 }],
      [
        { seq: 1, status: 'applied' },
        { seq: 2, status: 'merged', overwritten },
        { seq: 3, status: 'duplicate' },
      ],
    )
    expect(outcome).toEqual({ settled: [1, 2, 3], rejected: [], unanswered: [4], expectedSeq: null })
    expect((await db.outbox.toArray()).map((entry) => entry.seq)).toEqual([4])
    expect(await overwrittenList(db)).toMatchObject([{ seq: 2, name: 'createSplice', overwritten }])
  })

  it('when the server rejects, then the entry moves to rejected and its local effect is undone, later edits kept', async () => {
    const db = await freshDb()
    await seedClosure(db)
    const id = spliceArgs(1).id
    await applyPull(db, page([spliceChange({ id, lossDb: 0.2, notes: '' }, 3)], 3))
    await editSplice(db, id, { lossDb: 0.15 })
    await editSplice(db, id, { notes: 'redo tomorrow' })
    const ghost = spliceArgs(2)
    await logSplice(db, ghost)

    const outcome = await settleResults(
      db,
      [{ seq: 1 }, { seq: 2 }, { seq: 3 }],
      [
        { seq: 1, status: 'rejected', code: 'closure_locked', message: 'Closure HH-12 is signed off.' },
        { seq: 2, status: 'applied' },
        { seq: 3, status: 'rejected', code: 'forbidden', message: 'Not your crew.' },
      ],
    )
    expect(outcome.rejected).toEqual([1, 3])
    expect(await db.outbox.count()).toBe(0)
    expect(await rejectedList(db)).toMatchObject([
      { seq: 1, name: 'updateSplice', code: 'closure_locked', args: { id, fields: { lossDb: 0.15 } } },
      { seq: 3, name: 'createSplice', code: 'forbidden', args: { id: ghost.id } },
    ])
    expect(await db.splices.get(id)).toMatchObject({ lossDb: 0.2, notes: 'redo tomorrow' })
    expect(await db.splices.get(ghost.id)).toBeUndefined()
  })

  it('when the server reports a gap, then the entries stay and the expected seq is returned', async () => {
    const db = await freshDb()
    await seedClosure(db)
    await logSplice(db, spliceArgs(1))
    await logSplice(db, spliceArgs(2))
    const outcome = await settleResults(db, [{ seq: 2 }], [{ seq: 2, status: 'gap', expectedSeq: 1 }])
    expect(outcome).toMatchObject({ settled: [], unanswered: [2], expectedSeq: 1 })
    expect(await db.outbox.count()).toBe(2)
  })
})

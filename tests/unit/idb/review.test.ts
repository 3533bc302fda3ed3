import { describe, expect, it } from 'vitest'
import type { OutboxEntry, SpliceRow } from '@/idb/schema'
import { applyPull, settleResults } from '@/idb/replication'
import { MissingRecordError, MutationArgsError, reviewSplice } from '@/idb/writes'
import { ids, testId } from '../shared/builders'
import { freshDb, seedClosure, spliceArgs } from './support'

/** A splice as pulled from the server at change `serverSeq`. */
async function pulledSplice(db: Awaited<ReturnType<typeof freshDb>>, serverSeq = 3): Promise<SpliceRow> {
  const row: SpliceRow = {
    ...spliceArgs(1, { id: testId(500), lossDb: 0.117 }),
    method: 'single_fusion',
    lossDb: 0.117,
    attempt: 1,
    respliceReason: null,
    respliceNote: null,
    supersedesId: null,
    acceptReason: null,
    notes: '',
    isCurrent: true,
    flags: ['over_target'],
    reviewState: null,
    createdAt: '2025-03-14T14:00:00Z',
    serverSeq,
    deleted: false,
  } as SpliceRow
  await db.splices.put(row)
  return row
}

describe('reviewSplice on the device', () => {
  it('when the foreman sends a splice back, then the verdict shows at once and one outbox entry carries it from the splice’s base', async () => {
    const db = await freshDb(ids.otherSplicer)
    await seedClosure(db)
    const splice = await pulledSplice(db)
    const entry = await reviewSplice(db, {
      id: splice.id,
      verdict: 'sent_back',
      reason: ' Re-make: bubble. ',
    })
    expect(entry).toMatchObject({
      name: 'reviewSplice',
      args: { id: splice.id, verdict: 'sent_back', reason: 'Re-make: bubble.' },
      baseServerSeq: 3,
    })
    expect(await db.splices.get(splice.id)).toMatchObject({
      reviewState: 'sent_back',
      reviewReason: 'Re-make: bubble.',
      reviewedBy: ids.otherSplicer,
    })
    expect(await db.outbox.count()).toBe(1)
  })

  it('when the server refuses the verdict, then the splice shows as it was before', async () => {
    const db = await freshDb()
    await seedClosure(db)
    const splice = await pulledSplice(db)
    const entry: OutboxEntry = await reviewSplice(db, { id: splice.id, verdict: 'accepted', reason: 'Fine.' })
    await settleResults(
      db,
      [entry],
      [{ seq: entry.seq, status: 'rejected', code: 'closure_locked', message: 'Locked.' }],
    )
    expect((await db.splices.get(splice.id))?.reviewState).toBeNull()
    expect(await db.rejected.count()).toBe(1)
  })

  it('when a pull brings the splice again before the push, then the pending verdict is replayed over it', async () => {
    const db = await freshDb()
    await seedClosure(db)
    const splice = await pulledSplice(db)
    await reviewSplice(db, { id: splice.id, verdict: 'accepted', reason: 'Within budget.' })
    await applyPull(db, {
      changes: [
        {
          table: 'splices',
          id: splice.id,
          serverSeq: 4,
          deleted: false,
          row: { ...splice, notes: 'x', serverSeq: 4 },
        },
      ],
      cursor: 4,
      hasMore: false,
      lastMutationSeq: 0,
    })
    expect(await db.splices.get(splice.id)).toMatchObject({
      notes: 'x',
      reviewState: 'accepted',
      reviewReason: 'Within budget.',
    })
  })

  it('when the reason is blank or the splice is not on the device, then nothing is written', async () => {
    const db = await freshDb()
    await seedClosure(db)
    const splice = await pulledSplice(db)
    await expect(
      reviewSplice(db, { id: splice.id, verdict: 'accepted', reason: '   ' }),
    ).rejects.toBeInstanceOf(MutationArgsError)
    await expect(
      reviewSplice(db, { id: testId(999), verdict: 'accepted', reason: 'Fine.' }),
    ).rejects.toBeInstanceOf(MissingRecordError)
    expect(await db.outbox.count()).toBe(0)
  })
})

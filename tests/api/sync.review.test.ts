import request from 'supertest'
import { afterEach, describe, expect, it } from 'vitest'
import { makeTestApp, tableCounts, type TestApp } from './support/app'
import { closureId, mutation, newClientId, plannedSlot, pullAll, push, pushOk, userId } from './support/sync'

let t: TestApp
afterEach(() => t?.close())

const one = <T>(sql: string, ...params: unknown[]) => t.database.sqlite.prepare(sql).get(...params) as T
const all = <T>(sql: string, ...params: unknown[]) => t.database.sqlite.prepare(sql).all(...params) as T[]
const head = () => one<{ value: number }>('SELECT value FROM change_seq').value

/** The current splice in a slot of the demo plan (HH-02 tray 4 slot 10 reads 0.117 dB, over target). */
function spliceAt(label: string, tray: number, slot: number) {
  const at = plannedSlot(t, label, tray, slot)
  return one<{ id: string; server_seq: number }>(
    'SELECT id, server_seq FROM splices WHERE tray_id = ? AND slot = ? AND is_current = 1 AND deleted = 0',
    at.trayId,
    at.slot,
  )
}

describe('push: reviewSplice', () => {
  it('when the foreman accepts one splice and sends another back, then both verdicts are stored, audited, stamped and pulled', async () => {
    t = makeTestApp()
    const over = spliceAt('HH-02', 4, 10)
    const wrongPair = spliceAt('HH-02', 4, 24)
    const before = head()
    const client = newClientId()
    const answer = await pushOk(t, 'foreman', client, [
      mutation(
        1,
        'reviewSplice',
        { id: over.id, verdict: 'accepted', reason: 'Within budget for this span; OTDR to confirm.' },
        over.server_seq,
      ),
      mutation(
        2,
        'reviewSplice',
        { id: wrongPair.id, verdict: 'sent_back', reason: 'Fiber 108 spliced, plan says 96: re-make it.' },
        wrongPair.server_seq,
      ),
    ])
    expect(answer.results.map((r) => r.status)).toEqual(['applied', 'applied'])
    const foreman = userId(t, 'foreman')
    expect(one('SELECT review_state, review_reason, reviewed_by FROM splices WHERE id = ?', over.id)).toEqual(
      {
        review_state: 'accepted',
        review_reason: 'Within budget for this span; OTDR to confirm.',
        reviewed_by: foreman,
      },
    )
    expect(one('SELECT review_state FROM splices WHERE id = ?', wrongPair.id)).toEqual({
      review_state: 'sent_back',
    })
    const audit = all<{ field: string; new_value: string; client_id: string; mutation_seq: number }>(
      "SELECT field, new_value, client_id, mutation_seq FROM audit_log WHERE entity = 'splice' AND entity_id = ? ORDER BY id",
      wrongPair.id,
    )
    expect(audit.map((row) => [row.field, JSON.parse(row.new_value)])).toEqual([
      ['reviewState', 'sent_back'],
      ['reviewReason', 'Fiber 108 spliced, plan says 96: re-make it.'],
    ])
    expect(audit.every((row) => row.client_id === client && row.mutation_seq === 2)).toBe(true)

    // The splicer's phone hears of both verdicts on its next pull, with the reason.
    const changes = (await pullAll(t, 'splicer', before)).flatMap((page) => page.changes)
    const pulled = changes.find((c) => c.table === 'splices' && c.id === wrongPair.id)
    expect(pulled?.row).toMatchObject({
      reviewState: 'sent_back',
      reviewReason: 'Fiber 108 spliced, plan says 96: re-make it.',
    })
    expect(changes.some((c) => c.table === 'splices' && c.id === over.id)).toBe(true)
  })

  it('when a splicer or the inspector reviews, or the foreman of another crew, then nothing changes', async () => {
    t = makeTestApp()
    const over = spliceAt('HH-02', 4, 10)
    const args = { id: over.id, verdict: 'accepted', reason: 'Looks fine to me.' }
    const counts = tableCounts(t.database)
    const bySplicer = await pushOk(t, 'splicer', newClientId(), [mutation(1, 'reviewSplice', args)])
    expect(bySplicer.results[0]).toMatchObject({ status: 'rejected', code: 'forbidden' })
    const byOther = await pushOk(t, 'foreman2', newClientId(), [mutation(1, 'reviewSplice', args)])
    expect(byOther.results[0]).toMatchObject({ status: 'rejected', code: 'not_found' })
    const byInspector = await push(t, 'inspector', newClientId(), [mutation(1, 'reviewSplice', args)])
    expect(byInspector.status).toBe(403)
    expect(byInspector.body.error.code).toBe('forbidden')
    expect(one('SELECT review_state FROM splices WHERE id = ?', over.id)).toEqual({ review_state: null })
    // Refusals leave only their quarantine and audit rows behind.
    const after = tableCounts(t.database)
    expect(after.splices).toBe(counts.splices)
    expect(after.rejected_mutations).toBe((counts.rejected_mutations ?? 0) + 2)
  })

  it('when the reason is blank, the splice superseded or the closure signed off, then the review is refused', async () => {
    t = makeTestApp()
    const client = newClientId()
    const over = spliceAt('HH-02', 4, 10)
    const blank = await pushOk(t, 'foreman', client, [
      mutation(1, 'reviewSplice', { id: over.id, verdict: 'sent_back', reason: '  ' }),
    ])
    expect(blank.results[0]).toMatchObject({ status: 'rejected', code: 'invalid' })

    // A re-splice replaces the first attempt at HH-02 tray 1 slot 7; the old attempt is no longer reviewable.
    const first = one<{ id: string }>(
      'SELECT id FROM splices WHERE tray_id = ? AND slot = 7 AND attempt = 1',
      plannedSlot(t, 'HH-02', 1, 7).trayId,
    )
    const stale = await pushOk(t, 'foreman', client, [
      mutation(2, 'reviewSplice', { id: first.id, verdict: 'accepted', reason: 'Fine.' }),
    ])
    expect(stale.results[0]).toMatchObject({ status: 'rejected', code: 'conflict' })

    const signed = spliceAt('BLD-04', 1, 1)
    const locked = await pushOk(t, 'foreman', client, [
      mutation(3, 'reviewSplice', { id: signed.id, verdict: 'sent_back', reason: 'Re-make.' }),
    ])
    expect(locked.results[0]).toMatchObject({ status: 'rejected', code: 'closure_locked' })
    expect(
      one<{ n: number }>(
        "SELECT count(*) AS n FROM audit_log WHERE outcome = 'rejected' AND client_id = ?",
        client,
      ).n,
    ).toBe(3)
  })

  it('when the splicer changes the loss after the foreman looked, then the verdict is refused; after a fresh look it applies', async () => {
    t = makeTestApp()
    const over = spliceAt('HH-02', 4, 10)
    const seen = over.server_seq
    await pushOk(t, 'splicer', newClientId(), [
      mutation(1, 'updateSplice', { id: over.id, fields: { lossDb: 0.26 } }, seen),
    ])
    const client = newClientId()
    const late = await pushOk(t, 'foreman', client, [
      mutation(1, 'reviewSplice', { id: over.id, verdict: 'accepted', reason: 'Fine at 0.117.' }, seen),
    ])
    expect(late.results[0]).toMatchObject({ status: 'rejected', code: 'conflict' })
    const fresh = await pushOk(t, 'foreman', client, [
      mutation(
        2,
        'reviewSplice',
        { id: over.id, verdict: 'sent_back', reason: 'Now 0.26: re-make.' },
        head(),
      ),
    ])
    expect(fresh.results[0]).toMatchObject({ status: 'applied' })
  })

  it('when the splicer edits a sent-back splice, then it returns to the queue without the old reason', async () => {
    t = makeTestApp()
    const over = spliceAt('HH-02', 4, 10)
    await pushOk(t, 'foreman', newClientId(), [
      mutation(1, 'reviewSplice', { id: over.id, verdict: 'sent_back', reason: 'Re-make.' }, over.server_seq),
    ])
    await pushOk(t, 'splicer', newClientId(), [
      mutation(1, 'updateSplice', { id: over.id, fields: { lossDb: 0.09 } }, head()),
    ])
    expect(one('SELECT review_state, review_reason FROM splices WHERE id = ?', over.id)).toEqual({
      review_state: null,
      review_reason: null,
    })
  })

  it('when a review of a locked closure is quarantined, then the foreman sees it in the rejected list', async () => {
    t = makeTestApp()
    const signed = spliceAt('BLD-04', 1, 2)
    await pushOk(t, 'foreman', newClientId(), [
      mutation(1, 'reviewSplice', { id: signed.id, verdict: 'sent_back', reason: 'Re-make.' }),
    ])
    const list = await request(t.app)
      .get('/api/sync/rejected')
      .set('Authorization', await t.tokenFor('foreman'))
    expect(list.status).toBe(200)
    expect(list.body.items).toEqual([
      expect.objectContaining({
        name: 'reviewSplice',
        code: 'closure_locked',
        closureId: closureId(t, 'BLD-04'),
      }),
    ])
  })
})

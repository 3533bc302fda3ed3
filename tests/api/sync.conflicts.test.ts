import { afterEach, beforeEach, describe, expect, it } from 'vitest'
import { pushResponseSchema } from '#shared/schemas/sync'
import { makeTestApp, type TestApp } from './support/app'
import { mutation, newClientId, plannedSlot, pushOk, spliceArgs, userId } from './support/sync'

// Per-field conflicts (SYNC.md): a field conflicts when an accepted change of it is newer than the edit's
// baseServerSeq. A foreman's or the office's value beats a splicer's; between equal roles the later arrival
// wins. The losing value is kept in the audit trail as conflict_lost, and a losing device is told in
// `overwritten`.

let t: TestApp
let spliceId: string
let base: number
const phone = newClientId()
const foremanTablet = newClientId()

const one = <T>(sql: string, ...params: unknown[]) => t.database.sqlite.prepare(sql).get(...params) as T
const all = <T>(sql: string, ...params: unknown[]) => t.database.sqlite.prepare(sql).all(...params) as T[]
const splice = () => one<Record<string, unknown>>('SELECT * FROM splices WHERE id = ?', spliceId)
const lostRows = () =>
  all<Record<string, unknown>>(
    "SELECT user_id, client_id, field, old_value, new_value FROM audit_log WHERE outcome = 'conflict_lost' ORDER BY id",
  )
const update = (seq: number, fields: Record<string, unknown>, baseServerSeq = base) =>
  mutation(seq, 'updateSplice', { id: spliceId, fields }, baseServerSeq)

beforeEach(async () => {
  t = makeTestApp()
  const args = spliceArgs(plannedSlot(t, 'VLT-01', 2, 12), userId(t, 'splicer'), phone, { lossDb: 0.06 })
  spliceId = args.id as string
  await pushOk(t, 'splicer', phone, [mutation(1, 'createSplice', args)])
  base = splice().server_seq as number
})
afterEach(() => t.close())

describe('per-field conflicts', () => {
  it('when a splicer edits a loss the foreman changed since, then the foreman’s value stays and the splicer is told', async () => {
    t.database.sqlite.prepare("UPDATE splices SET review_state = 'accepted' WHERE id = ?").run(spliceId)
    await pushOk(t, 'foreman', foremanTablet, [update(1, { lossDb: 0.09 })])
    const body = await pushOk(t, 'splicer', phone, [update(2, { lossDb: 0.04, notes: 'Cleaned V-groove.' })])
    expect(pushResponseSchema.parse(body).results).toEqual([
      {
        seq: 2,
        status: 'merged',
        overwritten: [
          {
            field: 'lossDb',
            yours: 0.04,
            kept: 0.09,
            byUserId: userId(t, 'foreman'),
            byName: 'Ines Barrowclough',
          },
        ],
      },
    ])
    // The field without a conflict still applies; the conflict sends the splice back for review.
    expect(splice()).toMatchObject({ loss_db: 0.09, notes: 'Cleaned V-groove.', review_state: null })
    expect(lostRows()).toEqual([
      {
        user_id: userId(t, 'splicer'),
        client_id: phone,
        field: 'lossDb',
        old_value: '0.09',
        new_value: '0.04',
      },
    ])
  })

  it('when an edit claims a base from the future, then it is refused rather than slipping past conflict checks', async () => {
    await pushOk(t, 'foreman', foremanTablet, [update(1, { lossDb: 0.09 })])
    const body = await pushOk(t, 'splicer', phone, [update(2, { lossDb: 0.04 }, Number.MAX_SAFE_INTEGER)])
    expect(body.results[0]).toMatchObject({ seq: 2, status: 'rejected', code: 'invalid' })
    expect(splice()).toMatchObject({ loss_db: 0.09 })
  })

  it('when the foreman edits a value a splicer changed since, then the foreman’s value wins and the splicer’s is kept in the trail', async () => {
    await pushOk(t, 'splicer', phone, [update(2, { lossDb: 0.05 })])
    const body = await pushOk(t, 'foreman', foremanTablet, [update(1, { lossDb: 0.08 })])
    expect(body.results).toEqual([{ seq: 1, status: 'applied' }])
    expect(splice()).toMatchObject({ loss_db: 0.08 })
    expect(lostRows()).toEqual([
      {
        user_id: userId(t, 'splicer'),
        client_id: phone,
        field: 'lossDb',
        old_value: '0.08',
        new_value: '0.05',
      },
    ])
    expect(
      one(
        "SELECT outcome FROM audit_log WHERE entity_id = ? AND field = 'lossDb' ORDER BY id DESC",
        spliceId,
      ),
    ).toEqual({ outcome: 'merged' })
  })

  it('when two users of equal rank edit the same field from the same base, then the later arrival wins', async () => {
    const office = newClientId()
    await pushOk(t, 'foreman', foremanTablet, [update(1, { notes: 'Foreman: tray lid cracked.' })])
    const body = await pushOk(t, 'office', office, [update(1, { notes: 'Office: replace tray lid.' })])
    expect(body.results).toEqual([{ seq: 1, status: 'applied' }])
    expect(splice()).toMatchObject({ notes: 'Office: replace tray lid.' })
    expect(lostRows()).toEqual([
      {
        user_id: userId(t, 'foreman'),
        client_id: foremanTablet,
        field: 'notes',
        old_value: '"Office: replace tray lid."',
        new_value: '"Foreman: tray lid cracked."',
      },
    ])
  })

  it('when one splicer’s two devices edit the same field, then the later arrival wins', async () => {
    const tablet = newClientId()
    await pushOk(t, 'splicer', phone, [update(2, { method: 'mechanical' })])
    const body = await pushOk(t, 'splicer', tablet, [update(1, { method: 'ribbon_fusion' })])
    expect(body.results).toEqual([{ seq: 1, status: 'applied' }])
    expect(splice()).toMatchObject({ method: 'ribbon_fusion' })
    expect(lostRows()).toHaveLength(1)
  })

  it('when a device edits on top of its own unpulled edit, or edits different fields, then nothing conflicts', async () => {
    await pushOk(t, 'foreman', foremanTablet, [update(1, { notes: 'Checked.' })])
    const body = await pushOk(t, 'splicer', phone, [
      update(2, { lossDb: 0.05 }, 0),
      update(3, { lossDb: 0.045 }, 0),
    ])
    expect(body.results.map((r) => r.status)).toEqual(['applied', 'applied'])
    expect(splice()).toMatchObject({ loss_db: 0.045, notes: 'Checked.' })
    expect(lostRows()).toEqual([])
  })

  it('when a device had already seen the other change, then its edit simply applies', async () => {
    await pushOk(t, 'foreman', foremanTablet, [update(1, { lossDb: 0.09 })])
    const seen = splice().server_seq as number
    const body = await pushOk(t, 'splicer', phone, [update(2, { lossDb: 0.07 }, seen)])
    expect(body.results).toEqual([{ seq: 2, status: 'applied' }])
    expect(splice()).toMatchObject({ loss_db: 0.07 })
  })

  it('when a field changed outside push (no dated stamp), then it counts as changed at the row’s stamp', async () => {
    const foreman = userId(t, 'foreman')
    const later = base + 5
    t.database.sqlite.prepare('UPDATE change_seq SET value = ?').run(later)
    t.database.sqlite
      .prepare('UPDATE splices SET loss_db = 0.11, server_seq = ? WHERE id = ?')
      .run(later, spliceId)
    t.database.sqlite
      .prepare(
        `INSERT INTO audit_log (at, user_id, entity, entity_id, field, old_value, new_value, outcome)
         VALUES (?, ?, 'splice', ?, 'lossDb', '0.06', '0.11', 'applied')`,
      )
      .run(new Date().toISOString(), foreman, spliceId)
    const stale = await pushOk(t, 'splicer', phone, [update(2, { lossDb: 0.05 })])
    expect(stale.results[0]).toMatchObject({
      status: 'merged',
      overwritten: [{ field: 'lossDb', kept: 0.11 }],
    })
    const fresh = await pushOk(t, 'splicer', phone, [update(3, { lossDb: 0.05 }, later)])
    expect(fresh.results[0]).toEqual({ seq: 3, status: 'applied' })
  })
})

describe('a refusal after some of the mutation’s writes', () => {
  it('when an edit wrote its lost value and then is refused, then only that edit is taken back and the batch around it applies', async () => {
    await pushOk(t, 'foreman', foremanTablet, [update(1, { lossDb: 0.09 })])
    const other = spliceArgs(plannedSlot(t, 'VLT-01', 2, 13), userId(t, 'splicer'), phone)
    const seqBefore = one<{ value: number }>('SELECT value FROM change_seq').value
    // The conflicting loss is written to the audit trail as conflict_lost before slot 99 is found not to fit.
    const body = await pushOk(t, 'splicer', phone, [
      update(2, { lossDb: 0.04, slot: 99 }),
      mutation(3, 'createSplice', other),
      update(4, { notes: 'Sleeve re-seated.' }),
    ])
    expect(pushResponseSchema.parse(body).results.map((r) => [r.seq, r.status, r.code])).toEqual([
      [2, 'rejected', 'invalid'],
      [3, 'applied', undefined],
      [4, 'applied', undefined],
    ])
    expect(lostRows()).toEqual([])
    expect(splice()).toMatchObject({ loss_db: 0.09, slot: 12, notes: 'Sleeve re-seated.' })
    expect(one('SELECT id FROM splices WHERE id = ?', other.id)).toEqual({ id: other.id })
    expect(all('SELECT seq, code FROM rejected_mutations')).toEqual([{ seq: 2, code: 'invalid' }])
    const audit = all<{ mutation_seq: number; field: string | null; outcome: string }>(
      'SELECT mutation_seq, field, outcome FROM audit_log WHERE client_id = ? AND mutation_seq > 1 ORDER BY id',
      phone,
    )
    expect(audit).toEqual([
      { mutation_seq: 2, field: null, outcome: 'rejected' },
      { mutation_seq: 3, field: null, outcome: 'created' },
      { mutation_seq: 4, field: 'notes', outcome: 'applied' },
    ])
    // Each applied mutation took one change sequence value; the refused one's went back with its writes.
    const stamps = all<{ seq: number; serverSeq: number | null }>(
      "SELECT seq, json_extract(result, '$.serverSeq') AS serverSeq FROM applied_mutations WHERE client_id = ? AND seq > 1 ORDER BY seq",
      phone,
    )
    expect(stamps).toEqual([
      { seq: 2, serverSeq: null },
      { seq: 3, serverSeq: seqBefore + 1 },
      { seq: 4, serverSeq: seqBefore + 2 },
    ])
    expect(one<{ value: number }>('SELECT value FROM change_seq').value).toBe(seqBefore + 2)
  })
})

import request from 'supertest'
import { v7 as uuidv7 } from 'uuid'
import BetterSqlite3 from 'better-sqlite3'
import { afterEach, describe, expect, it } from 'vitest'
import { type AssessedSplice, assessSplice } from '#shared/domain/acceptance'
import { type PushResponse, pushResponseSchema } from '#shared/schemas/sync'
import * as audit from '../../server/repositories/audit'
import { isTemporaryFailure } from '../../server/services/sync'
import { makeTestApp, tableCounts, type TestApp } from './support/app'
import {
  closureId,
  mutation,
  newClientId,
  plannedSlot,
  push,
  pushOk,
  spliceArgs,
  userId,
} from './support/sync'

let t: TestApp
afterEach(() => t?.close())

const one = <T>(sql: string, ...params: unknown[]) => t.database.sqlite.prepare(sql).get(...params) as T
const all = <T>(sql: string, ...params: unknown[]) => t.database.sqlite.prepare(sql).all(...params) as T[]
interface Totals {
  logged: number
  over_target: number
  over_maximum: number
  resplices: number
  photos: number
}
const totalsOf = (closure: string) =>
  one<Totals>('SELECT * FROM closure_totals WHERE closure_id = ?', closure)
const spliceOf = (id: unknown) => one<Record<string, unknown>>('SELECT * FROM splices WHERE id = ?', id)
const changeSeq = () => one<{ value: number }>('SELECT value FROM change_seq').value

describe('push: every mutation applies', () => {
  it('when a splicer logs a splice, then it is stored with the flags assessSplice gives, with totals, audit and a stamp', async () => {
    t = makeTestApp()
    const client = newClientId()
    const slot = plannedSlot(t, 'VLT-01', 2, 1)
    const before = totalsOf(slot.closureId)
    // Over the 0.10 dB contract target on a first attempt.
    const args = spliceArgs(slot, userId(t, 'splicer'), client, { lossDb: 0.18 })
    const body = await pushOk(t, 'splicer', client, [mutation(1, 'createSplice', args)])
    expect(pushResponseSchema.parse(body)).toEqual({ results: [{ seq: 1, status: 'applied' }], lastSeq: 1 })

    const row = spliceOf(args.id)
    const limits = JSON.parse(one<{ limits: string }>('SELECT limits FROM projects').limits)
    const expected = assessSplice(
      { ...(args as unknown as AssessedSplice), attempt: 1, acceptReason: null, supersedesId: null },
      limits,
      { planRow: slot, otherCurrentSplices: [], closureState: 'in_progress' },
    ).flags
    expect(JSON.parse(row.flags as string)).toEqual(expected)
    expect(expected).toEqual(['over_target'])
    expect(row).toMatchObject({ is_current: 1, deleted: 0, server_seq: changeSeq() })
    const after = totalsOf(slot.closureId)
    expect(after.logged).toBe(before.logged + 1)
    expect(after.over_target).toBe(before.over_target + 1)
    expect(
      one('SELECT outcome, client_id, mutation_seq FROM audit_log WHERE entity_id = ?', args.id),
    ).toEqual({ outcome: 'created', client_id: client, mutation_seq: 1 })
    expect(one('SELECT last_seq FROM sync_clients WHERE client_id = ?', client)).toEqual({ last_seq: 1 })
  })

  it('when the first splice of a planned closure arrives, then the closure moves to in progress', async () => {
    t = makeTestApp()
    const client = newClientId()
    const slot = plannedSlot(t, 'AER-05', 1, 1)
    expect(one('SELECT state FROM closures WHERE id = ?', slot.closureId)).toEqual({ state: 'planned' })
    await pushOk(t, 'splicer2', client, [
      mutation(1, 'createSplice', spliceArgs(slot, userId(t, 'splicer2'), client)),
    ])
    expect(one('SELECT state FROM closures WHERE id = ?', slot.closureId)).toEqual({ state: 'in_progress' })
    expect(
      one(
        "SELECT old_value, new_value FROM audit_log WHERE entity = 'closure' AND entity_id = ? AND field = 'state'",
        slot.closureId,
      ),
    ).toEqual({ old_value: '"planned"', new_value: '"in_progress"' })
  })

  it('when a splice is re-made, then the new attempt is current, the old one is not, and totals count the re-splice', async () => {
    t = makeTestApp()
    const client = newClientId()
    const me = userId(t, 'splicer')
    const slot = plannedSlot(t, 'VLT-01', 2, 2)
    const first = spliceArgs(slot, me, client, { lossDb: 0.35 })
    await pushOk(t, 'splicer', client, [mutation(1, 'createSplice', first)])
    const before = totalsOf(slot.closureId)
    const second = spliceArgs(slot, me, client, {
      lossDb: 0.04,
      attempt: 2,
      supersedesId: first.id,
      respliceReason: 'bad_cleave',
    })
    const wrongPair = spliceArgs({ ...slot, fiberB: slot.fiberB + 1 }, me, client, {
      attempt: 3,
      supersedesId: second.id,
      respliceReason: 'other',
    })
    const notLater = spliceArgs(slot, me, client, {
      attempt: 2,
      supersedesId: second.id,
      respliceReason: 'other',
    })
    const body = await pushOk(t, 'splicer', client, [
      mutation(2, 'resplice', second),
      mutation(3, 'resplice', wrongPair),
      mutation(4, 'resplice', notLater),
    ])
    expect(body.results.map((r) => [r.status, r.code])).toEqual([
      ['applied', undefined],
      ['rejected', 'invalid'],
      ['rejected', 'invalid'],
    ])
    expect(spliceOf(first.id)).toMatchObject({ is_current: 0 })
    expect(spliceOf(second.id)).toMatchObject({ is_current: 1, attempt: 2 })
    expect(JSON.parse(spliceOf(second.id).flags as string)).toEqual(['resplice'])
    const after = totalsOf(slot.closureId)
    expect(after.resplices).toBe(before.resplices + 1)
    expect(after.over_maximum).toBe(before.over_maximum - 1)
    expect(after.logged).toBe(before.logged)
  })

  it('when splices sharing slots and fiber ends arrive in one batch, then flags and totals are those of one push each', async () => {
    // One batch judges a closure's later splices from the splices it holds in memory; one push per mutation
    // reads them from the table every time. Both must give the same flags and the same totals row.
    const run = async (app: TestApp, batched: boolean) => {
      const client = newClientId()
      const me = userId(app, 'splicer')
      const at = (tray: number, slot: number) => plannedSlot(app, 'VLT-01', tray, slot)
      const s1 = spliceArgs(at(1, 1), me, client)
      const s2 = spliceArgs(at(1, 2), me, client)
      const s3 = spliceArgs(at(1, 3), me, client)
      const s4 = spliceArgs(at(1, 4), me, client)
      // A fiber end of s1 in another slot; another pair in s2's slot; s2 made again; B end of s3; A end of r2.
      const s5 = spliceArgs({ ...at(1, 5), cableAId: at(1, 1).cableAId, fiberA: at(1, 1).fiberA }, me, client)
      const s6 = spliceArgs({ ...at(1, 6), trayId: at(1, 2).trayId, slot: 2 }, me, client)
      const r2 = spliceArgs(at(1, 2), me, client, {
        attempt: 2,
        supersedesId: s2.id,
        respliceReason: 'bad_cleave',
      })
      const s8 = spliceArgs({ ...at(2, 1), cableBId: at(1, 3).cableBId, fiberB: at(1, 3).fiberB }, me, client)
      const s9 = spliceArgs({ ...at(2, 2), cableAId: at(1, 2).cableAId, fiberA: at(1, 2).fiberA }, me, client)
      const s10 = spliceArgs({ ...at(2, 3), trayId: at(1, 2).trayId, slot: 2 }, me, client)
      const all = [s1, s2, s3, s4, s5, s6, r2, s8, s9, s10]
      const mutations = all.map((args, i) =>
        mutation(i + 1, args.supersedesId ? 'resplice' : 'createSplice', args),
      )
      const answers: PushResponse['results'] = []
      if (batched) answers.push(...(await pushOk(app, 'splicer', client, mutations)).results)
      else for (const m of mutations) answers.push(...(await pushOk(app, 'splicer', client, [m])).results)
      expect(answers.map((r) => r.status)).toEqual(all.map(() => 'applied'))
      const row = (id: unknown) =>
        app.database.sqlite.prepare('SELECT flags, is_current FROM splices WHERE id = ?').get(id) as {
          flags: string
          is_current: number
        }
      const {
        closure_id: _c,
        project_id: _p,
        last_activity_at: _l,
        ...totals
      } = app.database.sqlite
        .prepare('SELECT * FROM closure_totals WHERE closure_id = ?')
        .get(s1.closureId) as Record<string, unknown>
      return { splices: all.map((args) => row(args.id)), totals }
    }
    t = makeTestApp()
    const batched = await run(t, true)
    const other = makeTestApp()
    try {
      expect(batched).toEqual(await run(other, false))
    } finally {
      await other.close()
    }
    const flags = batched.splices.map((s) => JSON.parse(s.flags) as string[])
    expect(flags[4]).toContain('fiber_reused')
    expect(flags[5]).toContain('slot_reused')
    expect(flags[7]).toContain('fiber_reused')
    expect(flags[8]).toContain('fiber_reused')
    expect(flags[9]).toContain('slot_reused')
    expect(batched.splices[1]!.is_current).toBe(0)
  })

  it('when a splice is edited, then the fields change, flags and totals follow, and each field is audited', async () => {
    t = makeTestApp()
    const client = newClientId()
    const slot = plannedSlot(t, 'VLT-01', 2, 3)
    const args = spliceArgs(slot, userId(t, 'splicer'), client, { lossDb: 0.02 })
    await pushOk(t, 'splicer', client, [mutation(1, 'createSplice', args)])
    const before = totalsOf(slot.closureId)
    const seq = changeSeq()
    const body = await pushOk(t, 'splicer', client, [
      mutation(
        2,
        'updateSplice',
        { id: args.id, fields: { lossDb: 0.2, notes: 'Re-read after cooling.' } },
        seq,
      ),
    ])
    expect(body.results).toEqual([{ seq: 2, status: 'applied' }])
    const row = spliceOf(args.id)
    expect(row).toMatchObject({ loss_db: 0.2, notes: 'Re-read after cooling.', server_seq: seq + 1 })
    expect(JSON.parse(row.flags as string)).toEqual(['over_target'])
    expect(totalsOf(slot.closureId).over_target).toBe(before.over_target + 1)
    expect(
      all(
        'SELECT field, old_value, new_value, outcome FROM audit_log WHERE entity_id = ? AND field IS NOT NULL',
        args.id,
      ),
    ).toEqual([
      { field: 'lossDb', old_value: '0.02', new_value: '0.2', outcome: 'applied' },
      { field: 'notes', old_value: '""', new_value: '"Re-read after cooling."', outcome: 'applied' },
    ])
  })

  it('when an edit moves a splice out of its tray, then it is refused as invalid and nothing changes', async () => {
    t = makeTestApp()
    const client = newClientId()
    const slot = plannedSlot(t, 'VLT-01', 2, 4)
    const args = spliceArgs(slot, userId(t, 'splicer'), client)
    await pushOk(t, 'splicer', client, [mutation(1, 'createSplice', args)])
    const body = await pushOk(t, 'splicer', client, [
      mutation(2, 'updateSplice', { id: args.id, fields: { slot: 99 } }),
      mutation(3, 'updateSplice', { id: args.id, fields: { trayId: plannedSlot(t, 'HH-02', 1, 1).trayId } }),
    ])
    expect(body.results.map((r) => r.code)).toEqual(['invalid', 'invalid'])
    expect(spliceOf(args.id)).toMatchObject({ slot: 4, tray_id: slot.trayId })
  })

  it('when a splicer removes their unreviewed splice, then it becomes a tombstone and the totals drop it', async () => {
    t = makeTestApp()
    const client = newClientId()
    const me = userId(t, 'splicer')
    const slot = plannedSlot(t, 'VLT-01', 2, 5)
    const first = spliceArgs(slot, me, client, { lossDb: 0.4 })
    const second = spliceArgs(slot, me, client, {
      attempt: 2,
      supersedesId: first.id,
      respliceReason: 'bubble',
    })
    await pushOk(t, 'splicer', client, [mutation(1, 'createSplice', first), mutation(2, 'resplice', second)])
    const before = totalsOf(slot.closureId)
    const seq = changeSeq()
    const body = await pushOk(t, 'splicer', client, [
      mutation(3, 'deleteSplice', { id: first.id }),
      mutation(4, 'deleteSplice', { id: second.id }),
    ])
    // The replaced attempt stays on record; removing the mistaken re-splice makes it current again.
    expect(body.results.map((r) => r.code ?? r.status)).toEqual(['conflict', 'applied'])
    expect(spliceOf(second.id)).toMatchObject({ deleted: 1, server_seq: seq + 1 })
    expect(spliceOf(first.id)).toMatchObject({ deleted: 0, is_current: 1, server_seq: seq + 1 })
    const after = totalsOf(slot.closureId)
    expect(after.resplices).toBe(before.resplices - 1)
    expect(after.over_maximum).toBe(before.over_maximum + 1)
  })

  it('when a splice is reviewed or another splicer’s, then deleting it is refused', async () => {
    t = makeTestApp()
    const client = newClientId()
    const reviewed = one<{ id: string }>(
      "SELECT s.id FROM splices s JOIN closures c ON c.id = s.closure_id WHERE c.label LIKE 'VLT-01%' LIMIT 1",
    )
    t.database.sqlite.prepare("UPDATE splices SET review_state = 'accepted' WHERE id = ?").run(reviewed.id)
    const slot = plannedSlot(t, 'OTH-06', 1, 9)
    const theirs = spliceArgs(slot, userId(t, 'splicer2'), newClientId())
    await pushOk(t, 'splicer2', theirs.clientId as string, [mutation(1, 'createSplice', theirs)])
    const body = await pushOk(t, 'splicer', client, [
      mutation(1, 'deleteSplice', { id: reviewed.id }),
      mutation(2, 'deleteSplice', { id: theirs.id }),
    ])
    // Another crew's splice reads as missing.
    expect(body.results.map((r) => r.code)).toEqual(['conflict', 'not_found'])
  })

  it('when photos and notes are added and a photo removed, then the add-only sets and the photo count follow', async () => {
    t = makeTestApp()
    const client = newClientId()
    const slot = plannedSlot(t, 'VLT-01', 2, 6)
    const splice = spliceArgs(slot, userId(t, 'splicer'), client)
    const link = { id: uuidv7(), sha256: 'a'.repeat(64), entity: 'splice', entityId: splice.id }
    const trayLink = { id: uuidv7(), sha256: 'b'.repeat(64), entity: 'tray', entityId: slot.trayId }
    const note = {
      id: uuidv7(),
      entity: 'splice',
      entityId: splice.id,
      body: 'Tube 7 buffer nicked; re-dressed.',
    }
    await pushOk(t, 'splicer', client, [mutation(1, 'createSplice', splice)])
    const before = totalsOf(slot.closureId).photos
    const body = await pushOk(t, 'splicer', client, [
      mutation(2, 'addPhotoLink', link),
      mutation(3, 'addPhotoLink', trayLink),
      mutation(4, 'addNote', note),
    ])
    expect(body.results.every((r) => r.status === 'applied')).toBe(true)
    expect(totalsOf(slot.closureId).photos).toBe(before + 1)
    expect(one('SELECT sha256, deleted FROM photo_links WHERE id = ?', link.id)).toEqual({
      sha256: link.sha256,
      deleted: 0,
    })
    expect(one('SELECT body, author_id FROM notes WHERE id = ?', note.id)).toEqual({
      body: note.body,
      author_id: userId(t, 'splicer'),
    })
    await pushOk(t, 'splicer', client, [mutation(5, 'removePhotoLink', { id: link.id })])
    expect(one('SELECT deleted FROM photo_links WHERE id = ?', link.id)).toEqual({ deleted: 1 })
    expect(totalsOf(slot.closureId).photos).toBe(before)
  })

  it('when a splicer sets the closure position, then it is stored with an old → new audit trail', async () => {
    t = makeTestApp()
    const client = newClientId()
    const closure = closureId(t, 'PED-03')
    const old = one<{ lat: number; lon: number }>('SELECT lat, lon FROM closures WHERE id = ?', closure)
    await pushOk(t, 'splicer', client, [
      mutation(1, 'setClosurePosition', {
        closureId: closure,
        lat: 54.3201,
        lon: -2.8611,
        routePositionM: 2050,
      }),
    ])
    expect(one('SELECT lat, lon, route_position_m FROM closures WHERE id = ?', closure)).toEqual({
      lat: 54.3201,
      lon: -2.8611,
      route_position_m: 2050,
    })
    expect(
      one("SELECT old_value, new_value FROM audit_log WHERE entity_id = ? AND field = 'lat'", closure),
    ).toEqual({ old_value: String(old.lat), new_value: '54.3201' })
  })

  it('when the foreman signs off and reopens, then state, signer and reason are kept; a splicer may do neither', async () => {
    t = makeTestApp()
    const closure = closureId(t, 'PED-03')
    const splicerClient = newClientId()
    const refused = await pushOk(t, 'splicer', splicerClient, [
      mutation(1, 'signOffClosure', { closureId: closure, note: '' }),
    ])
    expect(refused.results[0]).toMatchObject({ status: 'rejected', code: 'forbidden' })
    const client = newClientId()
    await pushOk(t, 'foreman', client, [
      mutation(1, 'signOffClosure', { closureId: closure, note: 'Dressed, labelled, photographed.' }),
    ])
    expect(one('SELECT state, signed_off_by, signed_off_at FROM closures WHERE id = ?', closure)).toEqual({
      state: 'signed_off',
      signed_off_by: userId(t, 'foreman'),
      signed_off_at: '2025-06-11T08:15:30.000+01:00',
    })
    const noReason = await pushOk(t, 'foreman', client, [
      mutation(2, 'reopenClosure', { closureId: closure, reason: ' ' }),
    ])
    expect(noReason.results[0]).toMatchObject({ status: 'rejected', code: 'invalid' })
    await pushOk(t, 'foreman', client, [
      mutation(3, 'reopenClosure', { closureId: closure, reason: 'Tray 1 slot 9 needs re-making.' }),
    ])
    expect(one('SELECT state FROM closures WHERE id = ?', closure)).toEqual({ state: 'reopened' })
    expect(all('SELECT body FROM notes WHERE entity_id = ? ORDER BY created_at', closure)).toEqual([
      { body: 'Dressed, labelled, photographed.' },
      { body: 'Reopened: Tray 1 slot 9 needs re-making.' },
    ])
  })
})

describe('push: exactly once, in order, one device one user', () => {
  it('when the same seq arrives twice, then the second answer is the first one again and nothing happens twice', async () => {
    t = makeTestApp()
    const client = newClientId()
    const slot = plannedSlot(t, 'VLT-01', 2, 7)
    const args = spliceArgs(slot, userId(t, 'splicer'), client)
    const bad = { ...spliceArgs(slot, userId(t, 'splicer'), client), slot: 0 }
    const batch = [mutation(1, 'createSplice', args), mutation(2, 'createSplice', bad)]
    const first = await pushOk(t, 'splicer', client, batch)
    const counts = tableCounts(t.database)
    const seq = changeSeq()
    const again = await pushOk(t, 'splicer', client, batch)
    expect(first.results.map((r) => r.status)).toEqual(['applied', 'rejected'])
    // A refusal stays a refusal on resend, so the device moves it to its rejected list either way.
    expect(again).toEqual({
      results: [
        { seq: 1, status: 'duplicate' },
        { ...first.results[1], status: 'rejected' },
      ],
      lastSeq: 2,
    })
    expect(tableCounts(t.database)).toEqual(counts)
    expect(changeSeq()).toBe(seq)
  })

  it('when a seq is skipped, then the batch stops there with a gap and the expected seq', async () => {
    t = makeTestApp()
    const client = newClientId()
    const me = userId(t, 'splicer')
    const a = spliceArgs(plannedSlot(t, 'VLT-01', 2, 8), me, client)
    const b = spliceArgs(plannedSlot(t, 'VLT-01', 2, 9), me, client)
    const c = spliceArgs(plannedSlot(t, 'VLT-01', 2, 10), me, client)
    const body = await pushOk(t, 'splicer', client, [
      mutation(1, 'createSplice', a),
      mutation(3, 'createSplice', b),
      mutation(4, 'createSplice', c),
    ])
    expect(body).toEqual({
      results: [
        { seq: 1, status: 'applied' },
        { seq: 3, status: 'gap', expectedSeq: 2 },
        { seq: 4, status: 'gap', expectedSeq: 2 },
      ],
      lastSeq: 1,
    })
    expect(spliceOf(b.id)).toBeUndefined()
    expect(spliceOf(c.id)).toBeUndefined()
  })

  it('when another user pushes with a bound device id, then 403 and nothing is written', async () => {
    t = makeTestApp()
    const client = newClientId()
    const slot = plannedSlot(t, 'VLT-01', 2, 11)
    await pushOk(t, 'splicer', client, [
      mutation(1, 'createSplice', spliceArgs(slot, userId(t, 'splicer'), client)),
    ])
    await t.tokenFor('foreman')
    const counts = tableCounts(t.database)
    const res = await push(t, 'foreman', client, [
      mutation(2, 'addNote', {
        id: uuidv7(),
        entity: 'closure',
        entityId: slot.closureId,
        body: 'Mine now.',
      }),
    ])
    expect(res.status).toBe(403)
    expect(res.body.error.code).toBe('client_taken')
    expect(tableCounts(t.database)).toEqual(counts)
  })
})

describe('push: temporary failures roll the whole batch back', () => {
  it('when applying the third mutation hits SQLITE_BUSY, then 503 with Retry-After and nothing of the batch is kept', async () => {
    let failAt = -1
    t = makeTestApp({
      syncTestHooks: {
        pauseAfterMutation: null,
        beforeApply: (_mutation, index) => {
          if (index === failAt) throw Object.assign(new Error('database is locked'), { code: 'SQLITE_BUSY' })
        },
      },
    })
    const client = newClientId()
    const me = userId(t, 'splicer')
    const batch = [1, 2, 3].map((n) =>
      mutation(n, 'createSplice', spliceArgs(plannedSlot(t, 'VLT-01', 2, 20 + n), me, client)),
    )
    await t.tokenFor('splicer')
    const counts = tableCounts(t.database)
    const seq = changeSeq()
    failAt = 2
    const res = await push(t, 'splicer', client, batch)
    expect(res.status).toBe(503)
    expect(res.headers['retry-after']).toBe('2')
    expect(res.body.error.code).toBe('unavailable')
    expect(tableCounts(t.database)).toEqual(counts)
    expect(changeSeq()).toBe(seq)
    // The device resends the same seqs, and they apply once.
    failAt = -1
    const retry = await pushOk(t, 'splicer', client, batch)
    expect(retry.results.map((r) => r.status)).toEqual(['applied', 'applied', 'applied'])
  })

  it('when another connection holds the write lock past the busy timeout, then 503 and nothing written', async () => {
    t = makeTestApp()
    const client = newClientId()
    const args = spliceArgs(plannedSlot(t, 'VLT-01', 2, 30), userId(t, 'splicer'), client)
    await t.tokenFor('splicer')
    const other = new BetterSqlite3(t.config.dbFile)
    t.database.sqlite.pragma('busy_timeout = 50')
    const counts = tableCounts(t.database)
    other.prepare('BEGIN IMMEDIATE').run()
    try {
      const res = await push(t, 'splicer', client, [mutation(1, 'createSplice', args)])
      expect(res.status).toBe(503)
      expect(res.headers['retry-after']).toBeDefined()
    } finally {
      other.prepare('ROLLBACK').run()
      other.close()
    }
    expect(tableCounts(t.database)).toEqual(counts)
  })
})

describe('push: refused changes are quarantined and can be re-applied', () => {
  it('when payloads are invalid, forbidden or locked, then each is quarantined and audited, and the seq still advances', async () => {
    t = makeTestApp()
    const client = newClientId()
    const me = userId(t, 'splicer')
    const { id: _id, ...missingId } = spliceArgs(plannedSlot(t, 'VLT-01', 2, 40), me, client)
    const asForeman = spliceArgs(plannedSlot(t, 'VLT-01', 2, 41), userId(t, 'foreman'), client)
    const locked = spliceArgs(plannedSlot(t, 'BLD-04', 1, 1), me, client, { lossDb: 0.01 })
    const body = await pushOk(t, 'splicer', client, [
      mutation(1, 'createSplice', missingId),
      mutation(2, 'createSplice', asForeman),
      mutation(3, 'createSplice', locked),
    ])
    expect(body.lastSeq).toBe(3)
    expect(body.results.map((r) => [r.status, r.code])).toEqual([
      ['rejected', 'invalid'],
      ['rejected', 'forbidden'],
      ['rejected', 'closure_locked'],
    ])
    expect(body.results.every((r) => typeof r.message === 'string' && r.message.length > 0)).toBe(true)
    expect(all('SELECT seq, code, user_id FROM rejected_mutations ORDER BY seq')).toEqual([
      { seq: 1, code: 'invalid', user_id: me },
      { seq: 2, code: 'forbidden', user_id: me },
      { seq: 3, code: 'closure_locked', user_id: me },
    ])
    expect(one<{ args: string }>('SELECT args FROM rejected_mutations WHERE seq = 3').args).toBe(
      JSON.stringify(locked),
    )
    expect(
      all("SELECT mutation_seq FROM audit_log WHERE outcome = 'rejected' ORDER BY mutation_seq"),
    ).toEqual([{ mutation_seq: 1 }, { mutation_seq: 2 }, { mutation_seq: 3 }])
    expect(spliceOf(asForeman.id)).toBeUndefined()
    expect(spliceOf(locked.id)).toBeUndefined()
  })

  it('when a splicer’s change hits a signed-off closure, then the foreman sees it and re-applies it with one action', async () => {
    t = makeTestApp()
    const client = newClientId()
    const locked = spliceArgs(plannedSlot(t, 'BLD-04', 1, 1), userId(t, 'splicer'), client, { lossDb: 0.015 })
    await pushOk(t, 'splicer', client, [mutation(1, 'createSplice', locked)])
    const other = newClientId()
    await pushOk(t, 'splicer2', other, [
      mutation(1, 'addNote', {
        id: uuidv7(),
        entity: 'closure',
        entityId: closureId(t, 'VLT-01'),
        body: 'x',
      }),
    ])

    const list = async (who: 'foreman' | 'splicer' | 'splicer2' | 'office' | 'inspector') =>
      request(t.app)
        .get('/api/sync/rejected')
        .set('Authorization', await t.tokenFor(who))
    const seen = await list('foreman')
    expect(seen.status).toBe(200)
    // Scoped by the closure a payload is about: both name crew 1's closures, whoever sent them.
    expect(seen.body.items.map((i: { code: string }) => i.code).sort()).toEqual([
      'closure_locked',
      'not_found',
    ])
    expect((await list('splicer')).body.items).toHaveLength(1)
    expect((await list('splicer2')).body.items).toHaveLength(1)
    expect((await list('office')).body.total).toBe(2)
    expect((await list('inspector')).status).toBe(403)

    const item = seen.body.items.find((i: { code: string }) => i.code === 'closure_locked')
    expect(item).toMatchObject({ name: 'createSplice', args: locked, userName: 'Maren Oduya' })
    const reapply = (who: 'foreman' | 'splicer2' | 'splicer') =>
      t
        .tokenFor(who)
        .then((auth) =>
          request(t.app).post(`/api/sync/rejected/${item.id}/reapply`).set('Authorization', auth).send({}),
        )
    expect((await reapply('splicer')).status).toBe(403)
    const done = await reapply('foreman')
    expect(done.status).toBe(200)
    expect(done.body).toEqual({ rejectedId: item.id, result: { seq: 1, status: 'applied' } })
    const row = spliceOf(locked.id)
    expect(row).toMatchObject({ splicer_id: userId(t, 'splicer'), is_current: 1 })
    expect(JSON.parse(row.flags as string)).toContain('closure_signed_off')
    expect(
      one("SELECT user_id FROM audit_log WHERE outcome = 'reapplied' AND entity_id = ?", locked.id),
    ).toEqual({ user_id: userId(t, 'foreman') })
    expect((await reapply('foreman')).status).toBe(409)
    expect((await list('foreman')).body.items).toHaveLength(1)
  })
})

describe('push: the envelope', () => {
  it('when the body is too large, not JSON, of another version or over 100 mutations, then a 4xx and nothing written', async () => {
    t = makeTestApp()
    const auth = await t.tokenFor('splicer')
    const client = newClientId()
    const counts = tableCounts(t.database)
    const note = (seq: number) =>
      mutation(seq, 'addNote', {
        id: uuidv7(),
        entity: 'closure',
        entityId: closureId(t, 'VLT-01'),
        body: 'x',
      })
    const send = (body: unknown, type = 'application/json') =>
      request(t.app)
        .post('/api/sync/push')
        .set('Authorization', auth)
        .set('Content-Type', type)
        .send(typeof body === 'string' ? body : JSON.stringify(body))
    const huge = {
      clientId: client,
      schemaVersion: 1,
      mutations: [{ ...note(1), args: { body: 'x'.repeat(1024 * 1024) } }],
    }
    expect((await send(huge)).status).toBe(413)
    expect(
      (await send({ clientId: client, schemaVersion: 1, mutations: [note(1)] }, 'text/plain')).status,
    ).toBe(415)
    expect((await send('{"clientId": ')).body.error.code).toBe('malformed_json')
    expect((await send({ clientId: client, schemaVersion: 2, mutations: [note(1)] })).status).toBe(400)
    const many = Array.from({ length: 101 }, (_, i) => note(i + 1))
    const tooMany = await send({ clientId: client, schemaVersion: 1, mutations: many })
    expect(tooMany.status).toBe(400)
    expect(tooMany.body.error.details[0].path).toBe('mutations')
    expect(tableCounts(t.database)).toEqual(counts)
  })

  it('when an error is a busy, full or I/O error, then it counts as temporary; constraint errors do not', () => {
    for (const code of [
      'SQLITE_BUSY',
      'SQLITE_BUSY_SNAPSHOT',
      'SQLITE_FULL',
      'SQLITE_IOERR',
      'SQLITE_IOERR_FSYNC',
    ])
      expect(isTemporaryFailure(Object.assign(new Error(code), { code }))).toBe(true)
    for (const code of ['SQLITE_CONSTRAINT_FOREIGNKEY', 'SQLITE_ERROR', undefined])
      expect(isTemporaryFailure(Object.assign(new Error('x'), { code }))).toBe(false)
  })

  it('when a re-splice is edited to drop its reason, then the edit is refused', async () => {
    t = makeTestApp()
    const client = newClientId()
    const me = userId(t, 'splicer')
    const slot = plannedSlot(t, 'VLT-01', 2, 60)
    const first = spliceArgs(slot, me, client)
    const again = spliceArgs(slot, me, client, {
      attempt: 2,
      supersedesId: first.id,
      respliceReason: 'bubble',
    })
    const body = await pushOk(t, 'splicer', client, [
      mutation(1, 'createSplice', first),
      mutation(2, 'resplice', again),
      mutation(3, 'updateSplice', { id: again.id, fields: { respliceReason: null } }),
    ])
    expect(body.results[2]).toMatchObject({ status: 'rejected', code: 'invalid' })
    expect(spliceOf(again.id)).toMatchObject({ resplice_reason: 'bubble' })
  })
})

describe('audit rows of the sync writes', () => {
  it('when an audit row is written, then values are stored as JSON text and null stays NULL', () => {
    t = makeTestApp()
    const sqlite = t.database.sqlite
    const change = { userId: null, clientId: 'c', entity: 'splice', entityId: 'x', at: 'now', mutationSeq: 3 }
    audit.recordFieldChanges(
      sqlite,
      change,
      { f: 1, g: null, h: 'x' },
      { f: null, g: 'y', h: { z: [1] } },
      'merged',
    )
    audit.recordEvent(sqlite, change, 'created')
    audit.recordEvent(sqlite, change, 'rejected', { code: 'invalid', detail: null })
    const rows = all<Record<string, unknown>>(
      `SELECT field, old_value, new_value, outcome, client_id, mutation_seq FROM audit_log WHERE entity_id = 'x' ORDER BY id`,
    )
    const common = { client_id: 'c', mutation_seq: 3 }
    expect(rows).toEqual([
      { field: 'f', old_value: '1', new_value: null, outcome: 'merged', ...common },
      { field: 'g', old_value: null, new_value: '"y"', outcome: 'merged', ...common },
      { field: 'h', old_value: '"x"', new_value: '{"z":[1]}', outcome: 'merged', ...common },
      { field: null, old_value: null, new_value: null, outcome: 'created', ...common },
      {
        field: null,
        old_value: null,
        new_value: '{"code":"invalid","detail":null}',
        outcome: 'rejected',
        ...common,
      },
    ])
  })
})

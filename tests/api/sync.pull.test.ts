import request from 'supertest'
import { v7 as uuidv7 } from 'uuid'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { type Change, pullResponseSchema, type PullResponse } from '#shared/schemas/sync'
import { makeTestApp, type TestApp } from './support/app'
import {
  closureId,
  mutation,
  newClientId,
  plannedSlot,
  pull,
  pullAll,
  pushOk,
  spliceArgs,
  userId,
} from './support/sync'

let t: TestApp
const phone = newClientId()
const tablet = newClientId()
let seqAfterSeed: number
let deletedId: string

const one = <T>(sql: string, ...params: unknown[]) => t.database.sqlite.prepare(sql).get(...params) as T
const all = <T>(sql: string, ...params: unknown[]) => t.database.sqlite.prepare(sql).all(...params) as T[]
const head = () => one<{ value: number }>('SELECT value FROM change_seq').value
const changesOf = (pages: PullResponse[]) => pages.flatMap((page) => page.changes)
const keyOf = (c: Pick<Change, 'table' | 'id'>) => `${c.table}:${c.id}`

/** Every synced row the office sees, keyed like a pull change, with its server_seq. */
function everyRow(): Map<string, number> {
  const rows = new Map<string, number>()
  const tables: [string, string, string][] = [
    ['projects', 'projects', 'id'],
    ['cables', 'cables', 'id'],
    ['closures', 'closures', 'id'],
    ['closureAssignments', 'closure_assignments', "closure_id || ':' || user_id"],
    ['trays', 'trays', 'id'],
    ['planRows', 'plan_rows', 'id'],
    ['splices', 'splices', 'id'],
    ['photoLinks', 'photo_links', 'id'],
    ['notes', 'notes', 'id'],
  ]
  for (const [table, name, id] of tables) {
    for (const row of all<{ id: string; seq: number }>(`SELECT ${id} AS id, server_seq AS seq FROM ${name}`))
      rows.set(`${table}:${row.id}`, row.seq)
  }
  return rows
}

beforeAll(async () => {
  t = makeTestApp()
  seqAfterSeed = head()
  const me = userId(t, 'splicer')
  // Many small changes, each with its own server_seq, and re-splices that stamp two rows with one value.
  const mutations = []
  let seq = 0
  for (let slot = 1; slot <= 30; slot += 1) {
    const first = spliceArgs(plannedSlot(t, 'VLT-01', 2, slot), me, phone, { lossDb: 0.2 })
    mutations.push(mutation(++seq, 'createSplice', first))
    if (slot % 3 === 0) {
      const again = spliceArgs(plannedSlot(t, 'VLT-01', 2, slot), me, phone, {
        attempt: 2,
        supersedesId: first.id,
        respliceReason: 'high_loss',
      })
      mutations.push(mutation(++seq, 'resplice', again))
    }
    if (slot === 7) deletedId = first.id as string
  }
  await pushOk(t, 'splicer', phone, mutations)
  await pushOk(t, 'splicer', phone, [mutation(seq + 1, 'deleteSplice', { id: deletedId })])
  const other = spliceArgs(plannedSlot(t, 'OTH-06', 1, 10), userId(t, 'splicer2'), tablet)
  await pushOk(t, 'splicer2', tablet, [mutation(1, 'createSplice', other)])
})
afterAll(() => t.close())

describe('pull', () => {
  it('when the office pulls in small pages, then every row arrives once, in order, and no server_seq is split', async () => {
    const pages = await pullAll(t, 'office', 0, 7)
    expect(pages.length).toBeGreaterThan(5)
    pages.forEach((page) => pullResponseSchema.parse(page))
    const changes = changesOf(pages)
    expect(new Map(changes.map((c) => [keyOf(c), c.serverSeq]))).toEqual(everyRow())
    expect(changes).toHaveLength(everyRow().size)
    // In order within and across pages; a value's rows never straddle two pages.
    const seqs = changes.map((c) => c.serverSeq)
    expect(seqs).toEqual([...seqs].sort((a, b) => a - b))
    for (let i = 1; i < pages.length; i += 1) {
      const previous = pages[i - 1]!
      expect(pages[i]!.changes.every((c) => c.serverSeq > previous.cursor)).toBe(true)
      expect(previous.changes.every((c) => c.serverSeq <= previous.cursor)).toBe(true)
      expect(pages[i]!.cursor).toBeGreaterThanOrEqual(previous.cursor)
    }
    // The seeded scenario is one transaction: the first page holds all of it, however small the limit.
    expect(pages[0]!.changes.every((c) => c.serverSeq === seqAfterSeed)).toBe(true)
    expect(pages[0]!.changes.length).toBe([...everyRow().values()].filter((s) => s === seqAfterSeed).length)
    expect(pages.at(-1)).toMatchObject({ hasMore: false, cursor: head() })
  })

  it('when a splicer pulls, then only their crew’s closures and what hangs off them arrive, tombstones included', async () => {
    const changes = changesOf(await pullAll(t, 'splicer', 0, 50))
    const crew1 = new Set(
      all<{ id: string }>(
        "SELECT c.id FROM closures c JOIN users u ON u.crew_id = c.crew_id WHERE u.email LIKE 'maren%'",
      ).map((r) => r.id),
    )
    const closures = changes.filter((c) => c.table === 'closures')
    expect(new Set(closures.map((c) => c.id))).toEqual(crew1)
    for (const c of changes) {
      const row = c.row as Record<string, unknown>
      if (['trays', 'planRows', 'splices', 'closureAssignments'].includes(c.table))
        expect(crew1.has(row.closureId as string)).toBe(true)
    }
    const tombstone = changes.find((c) => c.id === deletedId)
    expect(tombstone).toMatchObject({
      table: 'splices',
      deleted: true,
      row: { id: deletedId, deleted: true },
    })
    expect(changes.some((c) => c.table === 'projects')).toBe(true)
    expect(changes.find((c) => c.table === 'closureAssignments')?.id).toMatch(/^[0-9a-f-]+:[0-9a-f-]+$/)
  })

  it('when the inspector pulls, then only signed-off closures arrive', async () => {
    const changes = changesOf(await pullAll(t, 'inspector'))
    const closures = changes.filter((c) => c.table === 'closures')
    expect(closures.map((c) => (c.row as { label: string }).label)).toEqual(['BLD-04 Old Maltings'])
    expect(changes.filter((c) => c.table === 'splices').length).toBe(25)
  })

  it('when the device is up to date, then the cursor is the current value and nothing more is due', async () => {
    const res = await pull(t, 'splicer', { cursor: head(), clientId: phone })
    expect(res.body).toEqual({ changes: [], cursor: head(), hasMore: false, lastMutationSeq: 41 })
    const other = await pull(t, 'splicer2', { cursor: head(), clientId: phone })
    expect(other.body.lastMutationSeq).toBe(0)
    const unknown = await pull(t, 'splicer2', { cursor: head(), clientId: uuidv7() })
    expect(unknown.body.lastMutationSeq).toBe(0)
  })

  it('when only rows out of scope changed, then the cursor still moves to the current value', async () => {
    const cursor = head()
    const note = {
      id: uuidv7(),
      entity: 'closure',
      entityId: closureId(t, 'OTH-06'),
      body: 'Cabinet door stiff.',
    }
    await pushOk(t, 'splicer2', tablet, [mutation(2, 'addNote', note)])
    const res = await pull(t, 'splicer', { cursor })
    expect(res.body).toMatchObject({ changes: [], cursor: head(), hasMore: false })
  })
})

describe('pull when scope changes', () => {
  it('when a closure moves to another crew, then its old crew gets a tombstone and the new crew gets all of it', async () => {
    const cursor = head()
    const moved = closureId(t, 'OTH-06')
    const crew1 = one<{ crew_id: string }>("SELECT crew_id FROM users WHERE email LIKE 'maren%'").crew_id
    const res = await request(t.app)
      .put(`/api/closures/${moved}/assignment`)
      .set('Authorization', await t.tokenFor('office'))
      .send({ crewId: crew1, splicerIds: [] })
    expect(res.status).toBe(200)

    const gone = changesOf(await pullAll(t, 'splicer2', cursor))
    expect(gone).toContainEqual({ table: 'closures', id: moved, serverSeq: head(), deleted: true, row: null })
    expect(gone.filter((c) => c.table === 'splices')).toEqual([])

    const gained = changesOf(await pullAll(t, 'splicer', cursor))
    const splices = gained.filter((c) => c.table === 'splices')
    expect(splices.length).toBe(
      one<{ n: number }>('SELECT count(*) AS n FROM splices WHERE closure_id = ?', moved).n,
    )
    expect(gained.filter((c) => c.table === 'planRows').length).toBe(12)
    expect(gained.find((c) => c.id === moved)).toMatchObject({ deleted: false, row: { crewId: crew1 } })
    // Older rows come as of the change that brought the closure in, so the cursor logic still holds.
    expect(gained.every((c) => c.serverSeq > cursor)).toBe(true)
  })

  it('when a closure is signed off and then reopened, then the inspector gains it whole and then loses it', async () => {
    const closure = closureId(t, 'PED-03')
    const lead = newClientId()
    const before = head()
    await pushOk(t, 'foreman', lead, [mutation(1, 'signOffClosure', { closureId: closure, note: '' })])
    const gained = changesOf(await pullAll(t, 'inspector', before))
    expect(gained.filter((c) => c.table === 'splices').length).toBe(12)
    expect(gained.find((c) => c.id === closure)).toMatchObject({ row: { state: 'signed_off' } })

    const signed = head()
    await pushOk(t, 'foreman', lead, [
      mutation(2, 'reopenClosure', { closureId: closure, reason: 'Re-make slot 9.' }),
    ])
    const lost = changesOf(await pullAll(t, 'inspector', signed))
    expect(lost).toEqual([{ table: 'closures', id: closure, serverSeq: head(), deleted: true, row: null }])
  })
})

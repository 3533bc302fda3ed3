import request from 'supertest'
import { afterEach, describe, expect, it } from 'vitest'
import { makeTestApp, tableCounts, type TestApp } from './support/app'
import { closureId, pullAll, userId } from './support/sync'

let t: TestApp
afterEach(() => t?.close())

const one = <T>(sql: string, ...params: unknown[]) => t.database.sqlite.prepare(sql).get(...params) as T
const crewOf = (label: string) =>
  one<{ crew_id: string }>('SELECT crew_id FROM closures WHERE id = ?', closureId(t, label)).crew_id
const head = () => one<{ value: number }>('SELECT value FROM change_seq').value

async function as(who: Parameters<TestApp['tokenFor']>[0]) {
  const auth = await t.tokenFor(who)
  return {
    get: (path: string) => request(t.app).get(path).set('Authorization', auth),
    put: (path: string, body: object) => request(t.app).put(path).set('Authorization', auth).send(body),
  }
}

describe('a crew day: who works which closures, in which order', () => {
  it('when the foreman reads the day, then each member lists their closures in the seeded order', async () => {
    t = makeTestApp()
    const crew = crewOf('VLT-01')
    const res = await (await as('foreman')).get(`/api/crews/${crew}/day`)
    expect(res.status).toBe(200)
    const maren = res.body.members.find((m: { id: string }) => m.id === userId(t, 'splicer'))
    expect(maren.name).toBe('Maren Oduya')
    expect(maren.closures.map((c: { label: string }) => c.label)).toEqual([
      'VLT-01 Weir Road',
      'HH-02 Tannery Row',
      'BLD-04 Old Maltings',
      'PED-03 Sloe Hill',
    ])
  })

  it('when the foreman reorders a splicer’s day, then positions follow, the change is audited and the splicer pulls it', async () => {
    t = makeTestApp()
    const crew = crewOf('VLT-01')
    const splicer = userId(t, 'splicer')
    const order = ['PED-03', 'HH-02', 'VLT-01'].map((label) => closureId(t, label))
    const before = head()
    const res = await (
      await as('foreman')
    ).put(`/api/crews/${crew}/day`, { userId: splicer, closureIds: order })
    expect(res.status).toBe(200)
    const day = res.body.members.find((m: { id: string }) => m.id === splicer)
    expect(
      day.closures.map((c: { closureId: string; position: number }) => [c.closureId, c.position]),
    ).toEqual([
      [order[0], 1],
      [order[1], 2],
      [order[2], 3],
    ])
    // BLD-04 was left out, so it is off her list: a tombstone reaches her phone.
    const changes = (await pullAll(t, 'splicer', before)).flatMap((page) => page.changes)
    const assignments = changes.filter((c) => c.table === 'closureAssignments')
    expect(assignments.find((c) => c.id === `${closureId(t, 'BLD-04')}:${splicer}`)?.deleted).toBe(true)
    expect(assignments.find((c) => c.id === `${order[0]}:${splicer}`)?.row).toMatchObject({ position: 1 })
    const audit = one<{ old_value: string; new_value: string; entity: string }>(
      "SELECT entity, old_value, new_value FROM audit_log WHERE entity = 'user' AND entity_id = ? AND field = 'day'",
      splicer,
    )
    expect(JSON.parse(audit.new_value)).toEqual(order)
    expect(JSON.parse(audit.old_value)).toHaveLength(4)
  })

  it('when a closure joins a splicer through the closure assignment, then it goes to the end of their day', async () => {
    t = makeTestApp()
    const splicer = userId(t, 'splicer')
    const crew = crewOf('VLT-01')
    const foreman = await as('foreman')
    await foreman.put(`/api/crews/${crew}/day`, { userId: splicer, closureIds: [closureId(t, 'VLT-01')] })
    const res = await foreman.put(`/api/closures/${closureId(t, 'PED-03')}/assignment`, {
      splicerIds: [splicer],
    })
    expect(res.status).toBe(200)
    const day = await foreman.get(`/api/crews/${crew}/day`)
    const maren = day.body.members.find((m: { id: string }) => m.id === splicer)
    expect(maren.closures.map((c: { label: string; position: number }) => [c.label, c.position])).toEqual([
      ['VLT-01 Weir Road', 1],
      ['PED-03 Sloe Hill', 2],
    ])
  })

  it('when the day names another crew’s closure, a signed-off one, a stranger or a closure twice, then 400 and nothing changes', async () => {
    t = makeTestApp()
    const crew = crewOf('VLT-01')
    const splicer = userId(t, 'splicer')
    const foreman = await as('foreman')
    const counts = tableCounts(t.database)
    const bad = [
      { userId: splicer, closureIds: [closureId(t, 'OTH-06')] },
      { userId: userId(t, 'foreman'), closureIds: [closureId(t, 'BLD-04')] },
      { userId: userId(t, 'splicer2'), closureIds: [closureId(t, 'VLT-01')] },
      { userId: splicer, closureIds: [closureId(t, 'VLT-01'), closureId(t, 'VLT-01')] },
      { userId: splicer, closureIds: 'VLT-01' },
      { userId: splicer, closureIds: [], extra: true },
    ]
    for (const body of bad) {
      const res = await foreman.put(`/api/crews/${crew}/day`, body)
      expect(res.status, JSON.stringify(body)).toBe(400)
      expect(res.body.error).toMatchObject({ code: expect.any(String), message: expect.any(String) })
    }
    expect(tableCounts(t.database)).toEqual(counts)
    // Another crew's day is not there for this foreman at all.
    const other = await foreman.get(`/api/crews/${crewOf('OTH-06')}/day`)
    expect(other.status).toBe(404)
  })
})

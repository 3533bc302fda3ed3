import request from 'supertest'
import { v7 as uuidv7 } from 'uuid'
import { afterEach, beforeEach, describe, expect, it } from 'vitest'
import { makeTestApp, tableCounts, type TestApp } from './support/app'

let t: TestApp
let office: string
let projectId: string

beforeEach(async () => {
  t = makeTestApp()
  office = await t.tokenFor('office')
  projectId = (t.database.sqlite.prepare('SELECT id FROM projects').get() as { id: string }).id
})
afterEach(() => t.close())

const as = (auth: string) => ({
  get: (path: string) => request(t.app).get(path).set('Authorization', auth),
  post: (path: string, body?: object) => request(t.app).post(path).set('Authorization', auth).send(body),
  patch: (path: string, body?: object) => request(t.app).patch(path).set('Authorization', auth).send(body),
  put: (path: string, body?: object) => request(t.app).put(path).set('Authorization', auth).send(body),
  delete: (path: string) => request(t.app).delete(path).set('Authorization', auth),
})

const cable = (overrides: object = {}) => ({
  id: uuidv7(),
  label: 'FD-048 Lantern Yard',
  fiberCount: 48,
  construction: 'loose_tube',
  fibersPerUnit: 12,
  fiberType: 'G.657.A1',
  lengthM: 420,
  ...overrides,
})

async function newClosureWithTrays(trayCapacities = [12, 12]) {
  const api = as(office)
  const closure = await api.post(`/api/projects/${projectId}/closures`, {
    id: uuidv7(),
    label: 'HH-90 Lantern Yard',
    kind: 'handhole',
    lat: 54.3,
    lon: -2.8,
    routePositionM: 4100,
  })
  expect(closure.status).toBe(201)
  const trays = []
  for (const [i, capacity] of trayCapacities.entries()) {
    const tray = await api.post(`/api/closures/${closure.body.id}/trays`, {
      id: uuidv7(),
      number: i + 1,
      capacity,
    })
    expect(tray.status).toBe(201)
    trays.push(tray.body)
  }
  const a = await api.post(`/api/projects/${projectId}/cables`, cable({ label: 'FD-048 A side' }))
  const b = await api.post(`/api/projects/${projectId}/cables`, cable({ label: 'FD-048 B side' }))
  expect(a.status).toBe(201)
  return { closure: closure.body, trays, a: a.body, b: b.body }
}

describe('projects and cables', () => {
  it('when the office creates a project without limits, then the TIA-568.3-D defaults are stored and an audit row is written', async () => {
    const res = await as(office).post('/api/projects', {
      id: uuidv7(),
      code: 'LNT-02',
      name: 'Lantern Yard extension',
      otdrToleranceM: 25,
      disagreementDb: 0.05,
    })
    expect(res.status).toBe(201)
    expect(res.body.limits.estimate).toEqual({ standardMaxDb: 0.3, contractTargetDb: 0.1 })
    expect(res.body.defaultMethod).toBe('single_fusion')
    const trail = await as(office).get(`/api/audit?entity=project&entityId=${res.body.id}`)
    expect(trail.body.items[0]).toMatchObject({ outcome: 'created' })
    const { serverSeq: _seq, deleted: _deleted, ...fields } = res.body
    const dup = await as(office).post('/api/projects', { ...fields, id: uuidv7() })
    expect(dup.status).toBe(409)
    expect(dup.body.error.code).toBe('conflict')
    expect(
      (await as(office).post('/api/projects', { ...res.body, id: uuidv7(), code: 'LNT-03' })).status,
    ).toBe(400)
  })

  it('when the limits change, then the audit trail keeps the old values and the totals follow', async () => {
    const api = as(office)
    const before = await api.get(`/api/projects/${projectId}/board?limit=100`)
    const overBefore = before.body.items.reduce((n: number, i: { overTarget: number }) => n + i.overTarget, 0)
    const project = (await api.get(`/api/projects/${projectId}`)).body
    const limits = { ...project.limits, estimate: { standardMaxDb: 0.3, contractTargetDb: 0.02 } }
    const res = await api.patch(`/api/projects/${projectId}`, { limits })
    expect(res.status).toBe(200)
    const after = await api.get(`/api/projects/${projectId}/board?limit=100`)
    const overAfter = after.body.items.reduce((n: number, i: { overTarget: number }) => n + i.overTarget, 0)
    expect(overAfter).toBeGreaterThan(overBefore)
    const trail = await api.get(`/api/audit?entity=project&entityId=${projectId}`)
    expect(trail.body.items[0]).toMatchObject({
      field: 'limits',
      oldValue: project.limits,
      newValue: limits,
      userName: expect.any(String),
    })
  })

  it('when a cable layout does not add up, then every problem is listed and nothing is saved', async () => {
    const before = tableCounts(t.database)
    const res = await as(office).post(`/api/projects/${projectId}/cables`, cable({ fiberCount: 50 }))
    expect(res.status).toBe(400)
    expect(res.body.error.details.length).toBeGreaterThan(0)
    const patch = await as(office).patch(
      `/api/cables/${t.database.sqlite.prepare('SELECT id FROM cables LIMIT 1').pluck().get()}`,
      { fiberCount: 13 },
    )
    expect(patch.status).toBe(400)
    expect(tableCounts(t.database)).toEqual(before)
  })

  it('when cables are listed, then the page is sorted by label and paginated', async () => {
    const page = await as(office).get(`/api/projects/${projectId}/cables?limit=2&offset=1`)
    expect(page.status).toBe(200)
    expect(page.body.items).toHaveLength(2)
    expect(page.body.total).toBeGreaterThanOrEqual(3)
    const all = (await as(office).get(`/api/projects/${projectId}/cables?limit=500`)).body.items.map(
      (c: { label: string }) => c.label,
    )
    expect(all).toEqual([...all].sort())
    expect(page.body.items.map((c: { label: string }) => c.label)).toEqual(all.slice(1, 3))
  })
})

describe('closures, trays and assignment', () => {
  it('when closures are filtered and sorted, then the server does it', async () => {
    const api = as(office)
    const vaults = await api.get(`/api/projects/${projectId}/closures?kind=vault`)
    expect(vaults.body.items.every((c: { kind: string }) => c.kind === 'vault')).toBe(true)
    const byRoute = await api.get(`/api/projects/${projectId}/closures?sort=routePosition&dir=desc&limit=500`)
    const positions = byRoute.body.items.map((c: { routePositionM: number }) => c.routePositionM)
    expect(positions).toEqual([...positions].sort((a, b) => b - a))
    const search = await api.get(`/api/projects/${projectId}/closures?q=weir`)
    expect(search.body.items.length).toBeGreaterThan(0)
    expect((await api.get(`/api/projects/${projectId}/closures?sort=colour`)).status).toBe(400)
  })

  it('when only one coordinate is given, then the closure is refused', async () => {
    const res = await as(office).post(`/api/projects/${projectId}/closures`, {
      id: uuidv7(),
      label: 'X',
      kind: 'vault',
      lat: 54,
    })
    expect(res.status).toBe(400)
    const closureId = t.database.sqlite
      .prepare('SELECT id FROM closures WHERE lat IS NOT NULL LIMIT 1')
      .pluck()
      .get()
    expect((await as(office).patch(`/api/closures/${closureId}`, { lat: null })).status).toBe(400)
  })

  it('when a tray capacity would cut off used slots, then it is refused', async () => {
    const { closure, trays, a, b } = await newClosureWithTrays([12])
    const row = await as(office).post(`/api/closures/${closure.id}/plan`, {
      id: uuidv7(),
      trayId: trays[0].id,
      slot: 10,
      cableAId: a.id,
      fiberA: 1,
      cableBId: b.id,
      fiberB: 1,
    })
    expect(row.status).toBe(201)
    expect((await as(office).patch(`/api/trays/${trays[0].id}`, { capacity: 8 })).status).toBe(400)
    expect((await as(office).patch(`/api/trays/${trays[0].id}`, { capacity: 24 })).status).toBe(200)
    const clash = await as(office).post(`/api/closures/${closure.id}/trays`, {
      id: uuidv7(),
      number: 1,
      capacity: 12,
    })
    expect(clash.status).toBe(409)
  })

  it('when the foreman orders the day, then the assignment lists the crew splicers in order', async () => {
    const foreman = await t.tokenFor('foreman')
    const closureId = t.database.sqlite
      .prepare("SELECT id FROM closures WHERE label LIKE 'HH-02%'")
      .pluck()
      .get() as string
    const crewSplicer = t.database.sqlite
      .prepare("SELECT id FROM users WHERE email LIKE 'maren%'")
      .pluck()
      .get() as string
    const otherCrew = t.database.sqlite
      .prepare("SELECT id FROM users WHERE email LIKE 'tobin%'")
      .pluck()
      .get() as string
    const ok = await as(foreman).put(`/api/closures/${closureId}/assignment`, { splicerIds: [crewSplicer] })
    expect(ok.status).toBe(200)
    expect(ok.body.splicers.map((s: { id: string }) => s.id)).toEqual([crewSplicer])
    const wrong = await as(foreman).put(`/api/closures/${closureId}/assignment`, { splicerIds: [otherCrew] })
    expect(wrong.status).toBe(400)
    expect(wrong.body.error.details[0].path).toBe('splicerIds.0')
    const move = await as(foreman).put(`/api/closures/${closureId}/assignment`, {
      crewId: null,
      splicerIds: [],
    })
    expect(move.status).toBe(403)
    const detail = await as(foreman).get(`/api/closures/${closureId}`)
    expect(detail.body.assignment.splicers).toHaveLength(1)
  })
})

describe('splice plans', () => {
  it('when a plan CSV has problems, then every problem comes back with its row and nothing is saved; fixed, it saves', async () => {
    const { closure, a, b } = await newClosureWithTrays([12, 12])
    const before = tableCounts(t.database)
    const bad = [
      'tray,slot,cable_a,fiber_a,cable_b,fiber_b',
      '1,1,FD-048 A side,1,FD-048 B side,1', // row 2 fine
      '1,1,FD-048 A side,2,FD-048 B side,2', // row 3 slot used twice
      '1,2,FD-048 A side,1,FD-048 B side,3', // row 4 fiber A1 used twice
      '3,1,FD-048 A side,4,FD-048 B side,4', // row 5 no tray 3
      '2,13,FD-048 A side,5,FD-048 B side,5', // row 6 slot beyond capacity
      '2,2,No such cable,6,FD-048 B side,49', // row 7 unknown cable, fiber beyond 48
      '2,3,FD-048 A side,x,FD-048 B side,7', // row 8 not a number
    ].join('\n')
    const res = await request(t.app)
      .post(`/api/closures/${closure.id}/plan/csv`)
      .set('Authorization', office)
      .type('text/csv')
      .send(bad)
    expect(res.status).toBe(400)
    expect(res.body.error.code).toBe('invalid_plan')
    const rows = res.body.error.details.map((d: { row: number }) => d.row)
    for (const row of [3, 4, 5, 6, 7, 8]) expect(rows).toContain(row)
    expect(rows).not.toContain(2)
    expect(tableCounts(t.database)).toEqual(before)

    const good = [
      'tray,slot,cable_a,fiber_a,cable_b,fiber_b',
      ...Array.from(
        { length: 24 },
        (_, i) => `${Math.floor(i / 12) + 1},${(i % 12) + 1},${a.label},${i + 1},${b.label},${i + 1}`,
      ),
    ].join('\r\n')
    const saved = await request(t.app)
      .post(`/api/closures/${closure.id}/plan/csv`)
      .set('Authorization', office)
      .type('text/csv')
      .send(`\uFEFF${good}`)
    expect(saved.status).toBe(201)
    expect(saved.body.items).toHaveLength(24)
    const rollup = await as(office).get(`/api/closures/${closure.id}/rollup`)
    expect(rollup.body).toMatchObject({ planned: 24, logged: 0, completionPct: 0 })
    // Uploading again replaces the plan; the old rows stay as tombstones for devices to pull.
    const again = await request(t.app)
      .post(`/api/closures/${closure.id}/plan/csv`)
      .set('Authorization', office)
      .type('text/csv')
      .send(good.split('\r\n').slice(0, 13).join('\n'))
    expect(again.status).toBe(201)
    expect(again.body).toMatchObject({ replaced: 24 })
    expect((await as(office).get(`/api/closures/${closure.id}/rollup`)).body.planned).toBe(12)
    const tombstones = t.database.sqlite
      .prepare('SELECT count(*) FROM plan_rows WHERE closure_id = ? AND deleted = 1')
      .pluck()
      .get(closure.id)
    expect(tombstones).toBe(24)
    const template = await as(office).get(`/api/closures/${closure.id}/plan?template=csv`)
    expect(template.headers['content-type']).toMatch(/text\/csv/)
    expect(template.text.split('\n')[0]).toBe('tray,slot,cable_a,fiber_a,cable_b,fiber_b')
  })

  it('when a straight plan is generated, then it fills the trays in order and replaces the old plan', async () => {
    const { closure, a, b } = await newClosureWithTrays([12, 12])
    const res = await as(office).post(`/api/closures/${closure.id}/plan/generate`, {
      ranges: [{ cableA: a.id, cableB: b.id, fromA: 13, fromB: 1, count: 18 }],
    })
    expect(res.status).toBe(201)
    expect(res.body.items).toHaveLength(18)
    const plan = (await as(office).get(`/api/closures/${closure.id}/plan?limit=500`)).body.items
    expect(plan).toHaveLength(18)
    const tooMany = await as(office).post(`/api/closures/${closure.id}/plan/generate`, {
      ranges: [{ cableA: a.id, cableB: b.id, fromA: 1, fromB: 1, count: 30 }],
    })
    expect(tooMany.status).toBe(400)
    expect(tooMany.body.error.code).toBe('not_enough_slots')
    expect((await as(office).get(`/api/closures/${closure.id}/plan?limit=500`)).body.items).toHaveLength(18)
  })

  it('when a plan row is edited into a clash, then it is refused; a good edit and a delete update the totals', async () => {
    const { closure, trays, a, b } = await newClosureWithTrays([12])
    await as(office).post(`/api/closures/${closure.id}/plan/generate`, {
      ranges: [{ cableA: a.id, cableB: b.id, fromA: 1, fromB: 1, count: 3 }],
    })
    const plan = (await as(office).get(`/api/closures/${closure.id}/plan`)).body.items
    const clash = await as(office).patch(`/api/plan-rows/${plan[1].id}`, { fiberA: 1 })
    expect(clash.status).toBe(400)
    expect(clash.body.error.details[0]).toMatchObject({ code: 'fiber_used_twice' })
    expect(
      (await as(office).patch(`/api/plan-rows/${plan[1].id}`, { fiberA: 9, trayId: trays[0].id })).status,
    ).toBe(200)
    expect((await as(office).delete(`/api/plan-rows/${plan[2].id}`)).status).toBe(204)
    expect((await as(office).get(`/api/closures/${closure.id}/rollup`)).body.planned).toBe(2)
  })
})

describe('splices', () => {
  it('when splices are filtered by closure, tray, splicer, day and flags, then only matching ones come back, sorted', async () => {
    const api = as(office)
    const one = t.database.sqlite
      .prepare("SELECT * FROM splices WHERE flags != '[]' AND is_current = 1 LIMIT 1")
      .get() as Record<string, string>
    expect(one).toBeDefined()
    const flagged = await api.get('/api/splices?flagged=true&limit=500')
    expect(flagged.body.items.length).toBeGreaterThan(0)
    expect(flagged.body.items.every((s: { flags: string[] }) => s.flags.length > 0)).toBe(true)
    const byTray = await api.get(
      `/api/splices?closureId=${one.closure_id}&trayId=${one.tray_id}&sort=slot&dir=asc&limit=500`,
    )
    const slots = byTray.body.items.map((s: { slot: number }) => s.slot)
    expect(slots).toEqual([...slots].sort((x, y) => x - y))
    expect(byTray.body.items.every((s: { trayId: string }) => s.trayId === one.tray_id)).toBe(true)
    const day = one.spliced_at!.slice(0, 10)
    const byDay = await api.get(`/api/splices?splicerId=${one.splicer_id}&day=${day}&limit=1`)
    expect(byDay.body.items).toHaveLength(1)
    expect(byDay.body.total).toBeGreaterThan(1)
    const history = await api.get(`/api/splices?current=all&limit=500&closureId=${one.closure_id}`)
    const current = await api.get(`/api/splices?limit=500&closureId=${one.closure_id}`)
    expect(history.body.total).toBeGreaterThanOrEqual(current.body.total)
    expect((await api.get(`/api/splices/${one.id}`)).body.id).toBe(one.id)
    expect((await api.get('/api/splices?day=yesterday')).status).toBe(400)
    expect((await api.get(`/api/splices/${uuidv7()}`)).status).toBe(404)
  })
})

describe('users and crews', () => {
  it('when the office adds a user and a crew, then they can sign in and the hash never leaves the server', async () => {
    const api = as(office)
    const crew = await api.post('/api/crews', { id: uuidv7(), name: 'Lantern Yard crew' })
    expect(crew.status).toBe(201)
    const user = await api.post('/api/users', {
      id: uuidv7(),
      email: 'New.Splicer@Example.test',
      name: 'Ada Quillfeather',
      role: 'splicer',
      crewId: crew.body.id,
      password: 'a long enough password',
    })
    expect(user.status).toBe(201)
    expect(user.body).not.toHaveProperty('passwordHash')
    expect(user.body.email).toBe('new.splicer@example.test')
    const signIn = await request(t.app)
      .post('/api/auth/sign-in')
      .send({ email: 'new.splicer@example.test', password: 'a long enough password' })
    expect(signIn.status).toBe(200)
    const list = await api.get('/api/users?limit=500')
    expect(JSON.stringify(list.body)).not.toContain('$2')
    expect(
      (await api.post('/api/users', { ...user.body, id: uuidv7(), password: 'a long enough password' }))
        .status,
    ).toBe(409)
    expect((await api.patch(`/api/crews/${crew.body.id}`, { name: 'Lantern Yard crew A' })).body.name).toBe(
      'Lantern Yard crew A',
    )
    expect(
      (
        await api.post('/api/users', {
          id: uuidv7(),
          email: 'x@y.test',
          name: 'X',
          role: 'splicer',
          password: 'short',
        })
      ).status,
    ).toBe(400)
  })

  it('when users are filtered by role, crew, state or name, then the server narrows the list', async () => {
    const api = as(office)
    const splicers = await api.get('/api/users?role=splicer&limit=500')
    expect(splicers.body.items.length).toBeGreaterThanOrEqual(2)
    expect(splicers.body.items.every((u: { role: string }) => u.role === 'splicer')).toBe(true)
    const crewId = splicers.body.items[0].crewId
    const crew = await api.get(`/api/users?crewId=${crewId}`)
    expect(crew.body.items.every((u: { crewId: string }) => u.crewId === crewId)).toBe(true)
    const named = await api.get('/api/users?q=ODUYA')
    expect(named.body.items.map((u: { name: string }) => u.name)).toEqual(['Maren Oduya'])
    expect((await api.get('/api/users?active=false')).body.total).toBe(0)
    // LIKE wildcards typed by the user are matched literally.
    expect((await api.get('/api/users?q=%25')).body.total).toBe(0)
    expect((await api.get('/api/users?q=_')).body.total).toBe(0)
    expect((await api.get('/api/users?role=admin')).status).toBe(400)
  })

  it('when the office tries to disable itself, then it is refused', async () => {
    const me = (await as(office).get('/api/auth/me')).body.user
    expect((await as(office).patch(`/api/users/${me.id}`, { active: false })).status).toBe(400)
  })
})

describe('bad input on every write route', () => {
  const writes = () => {
    const closureId = t.database.sqlite
      .prepare("SELECT id FROM closures WHERE label LIKE 'VLT-01%'")
      .pluck()
      .get()
    const q = (sql: string) => t.database.sqlite.prepare(sql).pluck().get()
    return [
      ['post', '/api/projects'],
      ['patch', `/api/projects/${projectId}`],
      ['post', `/api/projects/${projectId}/cables`],
      ['patch', `/api/cables/${q('SELECT id FROM cables LIMIT 1')}`],
      ['post', `/api/projects/${projectId}/closures`],
      ['patch', `/api/closures/${closureId}`],
      ['put', `/api/closures/${closureId}/assignment`],
      ['post', `/api/closures/${closureId}/trays`],
      ['patch', `/api/trays/${q('SELECT id FROM trays LIMIT 1')}`],
      ['post', `/api/closures/${closureId}/plan`],
      ['post', `/api/closures/${closureId}/plan/generate`],
      ['patch', `/api/plan-rows/${q('SELECT id FROM plan_rows LIMIT 1')}`],
      ['post', '/api/users'],
      ['patch', `/api/users/${q("SELECT id FROM users WHERE role = 'splicer' LIMIT 1")}`],
      ['post', '/api/crews'],
      ['patch', `/api/crews/${q('SELECT id FROM crews LIMIT 1')}`],
    ] as const
  }

  const bodies: [string, (r: request.Test) => request.Test][] = [
    ['malformed JSON', (r) => r.set('Content-Type', 'application/json').send('{"label": "x",')],
    ['wrong content type', (r) => r.set('Content-Type', 'text/plain').send('label=x')],
    ['an array', (r) => r.send([1, 2])],
    ['unknown keys', (r) => r.send({ nonsense: true })],
    [
      'a __proto__ key',
      (r) => r.set('Content-Type', 'application/json').send('{"__proto__": {"admin": true}}'),
    ],
    [
      'out-of-range numbers',
      (r) => r.send({ capacity: -1, fiberCount: 1e9, lengthM: -5, slot: 0, lat: 200 }),
    ],
    ['wrong types', (r) => r.send({ name: 42, label: [], active: 'yes', splicerIds: 'all' })],
    ['an oversize body', (r) => r.send({ name: 'x'.repeat(1_100_000) })],
  ]

  it('when any write route gets bad input, then a 4xx with the error shape comes back and nothing is written', async () => {
    const before = tableCounts(t.database)
    for (const [method, path] of writes()) {
      for (const [what, make] of bodies) {
        const res = await make(request(t.app)[method](path).set('Authorization', office))
        expect({ path, what, ok: res.status >= 400 && res.status < 500 }).toEqual({ path, what, ok: true })
        expect(res.body.error).toMatchObject({ code: expect.any(String), message: expect.any(String) })
      }
    }
    expect(tableCounts(t.database)).toEqual(before)
    expect(({} as Record<string, unknown>).admin).toBeUndefined()
  })

  it('when an address carries a malformed %-escape, then 400 with the error shape, even without a token', async () => {
    for (const path of ['/api/closures/%E0%A4%A', '/api/photos/%zz', '/api/projects/%']) {
      const res = await request(t.app).get(path)
      expect(res.status).toBe(400)
      expect(res.body.error.code).toBe('bad_request')
    }
  })

  it('when a validation fails, then every bad field is listed', async () => {
    const res = await as(office).post('/api/projects', {
      id: 'nope',
      code: 'lower case',
      name: '',
      otdrToleranceM: -1,
      disagreementDb: 'x',
    })
    expect(res.status).toBe(400)
    const paths = res.body.error.details.map((d: { path: string }) => d.path)
    for (const field of ['id', 'code', 'name', 'otdrToleranceM', 'disagreementDb'])
      expect(paths).toContain(field)
  })
})

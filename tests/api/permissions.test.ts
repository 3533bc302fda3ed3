import request from 'supertest'
import { v7 as uuidv7 } from 'uuid'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { policy, type RouteKey, type Rule } from '../../server/policy'
import { makeTestApp, tableCounts, type DemoWho, type TestApp } from './support/app'
import { jpegBytes, sha256, upload } from './support/photos'

// Every route × every actor, read from the one policy table. Scope on top of roles: splicer and
// foreman reach their own crew's closures, the inspector only signed-off ones, the office all;
// out-of-scope records answer 404. A route without a recipe here, or registered without a policy
// line, fails the test.

type Target = 'own' | 'signedOff' | 'otherCrew'
interface Ids {
  projectId: string
  cableId: string
  closureId: string
  trayId: string
  rowId: string
  spliceId: string
  userId: string
  crewId: string
  /** A stored photo linked to the closure. */
  photo: string
  /** A quarantined mutation about the closure, already resolved (re-applying it is refused, writing nothing). */
  rejectedId: number
}
interface Recipe {
  path: (ids: Ids) => string
  /** Whether the record behind the path belongs to a closure (and so follows closure scope). */
  closureBound: boolean
  /** The body of a write: invalid on purpose, so an allowed caller gets 400 and nothing is written. */
  body?: { type: 'json' | 'csv' | 'jpeg'; value: string | object | Buffer }
  /** Status an allowed caller gets (200 for reads, 400 for the invalid writes, 204 for delete). */
  allowed: number
}

const read = (path: Recipe['path'], closureBound = false): Recipe => ({ path, closureBound, allowed: 200 })
const write = (
  path: Recipe['path'],
  closureBound = false,
  body: Recipe['body'] = { type: 'json', value: {} },
): Recipe => ({
  path,
  closureBound,
  body,
  allowed: 400,
})

const recipes: Record<RouteKey, Recipe | 'public'> = {
  'GET /api/health': 'public',
  'GET /api/ready': 'public',
  'POST /api/auth/sign-in': 'public',
  'POST /api/auth/refresh': 'public',
  'POST /api/auth/sign-out': 'public',
  'GET /api/auth/me': read(() => '/api/auth/me'),
  'GET /api/projects': read(() => '/api/projects'),
  'POST /api/projects': write(() => '/api/projects'),
  'GET /api/projects/:projectId': read((i) => `/api/projects/${i.projectId}`),
  'PATCH /api/projects/:projectId': write((i) => `/api/projects/${i.projectId}`),
  'GET /api/projects/:projectId/cables': read((i) => `/api/projects/${i.projectId}/cables`),
  'POST /api/projects/:projectId/cables': write((i) => `/api/projects/${i.projectId}/cables`),
  'GET /api/cables/:cableId': read((i) => `/api/cables/${i.cableId}`),
  'PATCH /api/cables/:cableId': write((i) => `/api/cables/${i.cableId}`),
  'GET /api/projects/:projectId/closures': read((i) => `/api/projects/${i.projectId}/closures`),
  'POST /api/projects/:projectId/closures': write((i) => `/api/projects/${i.projectId}/closures`),
  'GET /api/closures/:closureId': read((i) => `/api/closures/${i.closureId}`, true),
  'PATCH /api/closures/:closureId': write((i) => `/api/closures/${i.closureId}`, true),
  'PUT /api/closures/:closureId/assignment': write((i) => `/api/closures/${i.closureId}/assignment`, true),
  'GET /api/closures/:closureId/rollup': read((i) => `/api/closures/${i.closureId}/rollup`, true),
  'GET /api/closures/:closureId/trays': read((i) => `/api/closures/${i.closureId}/trays`, true),
  'POST /api/closures/:closureId/trays': write((i) => `/api/closures/${i.closureId}/trays`, true),
  'PATCH /api/trays/:trayId': write((i) => `/api/trays/${i.trayId}`, true),
  'GET /api/closures/:closureId/plan': read((i) => `/api/closures/${i.closureId}/plan`, true),
  'POST /api/closures/:closureId/plan': write((i) => `/api/closures/${i.closureId}/plan`, true),
  'POST /api/closures/:closureId/plan/csv': write((i) => `/api/closures/${i.closureId}/plan/csv`, true, {
    type: 'csv',
    value: 'not,a,plan\n',
  }),
  'POST /api/closures/:closureId/plan/generate': write(
    (i) => `/api/closures/${i.closureId}/plan/generate`,
    true,
  ),
  'PATCH /api/plan-rows/:rowId': write((i) => `/api/plan-rows/${i.rowId}`, true),
  'DELETE /api/plan-rows/:rowId': {
    path: (i) => `/api/plan-rows/${i.rowId}`,
    closureBound: true,
    allowed: 204,
  },
  'GET /api/splices': read(() => '/api/splices'),
  'GET /api/splices/:spliceId': read((i) => `/api/splices/${i.spliceId}`, true),
  'GET /api/projects/:projectId/board': read((i) => `/api/projects/${i.projectId}/board`),
  'GET /api/projects/:projectId/production': read(
    (i) => `/api/projects/${i.projectId}/production?from=2025-06-10`,
  ),
  'GET /api/audit': read((i) => `/api/audit?entity=closure&entityId=${i.closureId}`, true),
  'POST /api/sync/push': write(() => '/api/sync/push'),
  'GET /api/sync/pull': read(() => '/api/sync/pull'),
  'GET /api/sync/rejected': read(() => '/api/sync/rejected'),
  'POST /api/sync/rejected/:rejectedId/reapply': {
    path: (i) => `/api/sync/rejected/${i.rejectedId}/reapply`,
    closureBound: true,
    body: { type: 'json', value: {} },
    allowed: 409,
  },
  'HEAD /api/photos/:sha256': read((i) => `/api/photos/${i.photo}`, true),
  'GET /api/photos/:sha256': read((i) => `/api/photos/${i.photo}`, true),
  // JPEG bytes that do not hash to the address: an allowed caller gets 422 and nothing is stored.
  'PUT /api/photos/:sha256': {
    path: () => `/api/photos/${'0'.repeat(64)}`,
    closureBound: false,
    body: { type: 'jpeg', value: jpegBytes(64, 64, 16) },
    allowed: 422,
  },
  'GET /api/users': read(() => '/api/users'),
  'POST /api/users': write(() => '/api/users'),
  'PATCH /api/users/:userId': write((i) => `/api/users/${i.userId}`),
  'GET /api/crews': read(() => '/api/crews'),
  'POST /api/crews': write(() => '/api/crews'),
  'PATCH /api/crews/:crewId': write((i) => `/api/crews/${i.crewId}`),
  'GET /api/crews/:crewId/day': read((i) => `/api/crews/${i.crewId}/day`, true),
  'PUT /api/crews/:crewId/day': write((i) => `/api/crews/${i.crewId}/day`, true),
  'GET /api/projects/:projectId/otdr/template': read((i) => `/api/projects/${i.projectId}/otdr/template`),
  'POST /api/projects/:projectId/otdr/imports': write((i) => `/api/projects/${i.projectId}/otdr/imports`),
  'GET /api/closures/:closureId/reconciliation': read(
    (i) => `/api/closures/${i.closureId}/reconciliation`,
    true,
  ),
  'GET /api/cables/:cableId/reconciliation': read((i) => `/api/cables/${i.cableId}/reconciliation`),
  'GET /api/projects/:projectId/fiber-path': read(
    (i) => `/api/projects/${i.projectId}/fiber-path?cableId=${i.cableId}&fiber=1`,
  ),
  'GET /api/projects/:projectId/loss-budget': read((i) => `/api/projects/${i.projectId}/loss-budget`),
  'PUT /api/projects/:projectId/loss-budget': write((i) => `/api/projects/${i.projectId}/loss-budget`),
  'GET /api/closures/:closureId/export/splices': read(
    (i) => `/api/closures/${i.closureId}/export/splices`,
    true,
  ),
  'GET /api/projects/:projectId/export/splices': read((i) => `/api/projects/${i.projectId}/export/splices`),
  'GET /api/projects/:projectId/export/board': read((i) => `/api/projects/${i.projectId}/export/board`),
  'GET /api/closures/:closureId/close-out': read((i) => `/api/closures/${i.closureId}/close-out`, true),
  'POST /api/invitations': write(() => '/api/invitations'),
  'POST /api/auth/invitation/accept': 'public',
  'POST /api/auth/password-reset': 'public',
  'POST /api/auth/password-reset/confirm': 'public',
  'POST /api/projects/:projectId/production-report': write(
    (i) => `/api/projects/${i.projectId}/production-report`,
  ),
  'GET /api/mailbox': read(() => '/api/mailbox'),
  // No message is caught in this app: an allowed caller gets 404 for an unknown message, nothing else.
  'GET /api/mailbox/:messageId': {
    path: () => `/api/mailbox/${uuidv7()}`,
    closureBound: false,
    allowed: 404,
  },
  'GET /api/mailbox/:messageId/attachments/:index': {
    path: () => `/api/mailbox/${uuidv7()}/attachments/0`,
    closureBound: false,
    allowed: 404,
  },
}

const actors: DemoWho[] = ['splicer', 'foreman', 'office', 'inspector', 'splicer2', 'foreman2']

let t: TestApp
let ids: Record<Target, Ids>

function idsFor(closureLabelPrefix: string): Ids {
  const q = <T>(sql: string, ...params: unknown[]) => t.database.sqlite.prepare(sql).get(...params) as T
  const closure = q<{ id: string; project_id: string; crew_id: string }>(
    'SELECT id, project_id, crew_id FROM closures WHERE label LIKE ?',
    `${closureLabelPrefix}%`,
  )
  return {
    projectId: closure.project_id,
    cableId: q<{ id: string }>(
      'SELECT id FROM cables WHERE project_id = ? ORDER BY label LIMIT 1',
      closure.project_id,
    ).id,
    closureId: closure.id,
    trayId: q<{ id: string }>('SELECT id FROM trays WHERE closure_id = ? ORDER BY number LIMIT 1', closure.id)
      .id,
    rowId: q<{ id: string }>(
      'SELECT id FROM plan_rows WHERE closure_id = ? AND deleted = 0 ORDER BY slot LIMIT 1',
      closure.id,
    ).id,
    spliceId: q<{ id: string }>('SELECT id FROM splices WHERE closure_id = ? LIMIT 1', closure.id).id,
    userId: q<{ id: string }>("SELECT id FROM users WHERE role = 'inspector'").id,
    crewId: closure.crew_id,
    photo: '',
    rejectedId: 0,
  }
}

/** A photo linked to the target's closure and a resolved quarantined mutation about it. */
async function addSyncRecords(target: Ids): Promise<void> {
  const sqlite = t.database.sqlite
  const bytes = jpegBytes()
  expect((await upload(t, 'office', bytes)).status).toBe(201)
  target.photo = sha256(bytes)
  const office = sqlite.prepare("SELECT id FROM users WHERE role = 'office'").pluck().get() as string
  const at = new Date().toISOString()
  sqlite
    .prepare(
      `INSERT INTO photo_links (id, sha256, entity, entity_id, added_by, created_at) VALUES (?, ?, 'closure', ?, ?, ?)`,
    )
    .run(uuidv7(), target.photo, target.closureId, office, at)
  const client = uuidv7()
  sqlite
    .prepare('INSERT INTO sync_clients (client_id, user_id, created_at, last_seen_at) VALUES (?, ?, ?, ?)')
    .run(client, office, at, at)
  const args = { id: uuidv7(), entity: 'closure', entityId: target.closureId, body: 'Resolved already.' }
  target.rejectedId = Number(
    sqlite
      .prepare(
        `INSERT INTO rejected_mutations (client_id, seq, user_id, name, args, code, message, at, resolved_at)
         VALUES (?, 1, ?, 'addNote', ?, 'closure_locked', 'Signed off.', ?, ?)`,
      )
      .run(client, office, JSON.stringify(args), at, at).lastInsertRowid,
  )
}

beforeAll(async () => {
  t = makeTestApp()
  ids = {
    own: idsFor('VLT-01'), // crew 1, not signed off
    signedOff: idsFor('BLD-04'), // crew 1, signed off
    otherCrew: idsFor('OTH-06'), // crew 2
  }
  for (const target of Object.values(ids)) await addSyncRecords(target)
})
afterAll(() => t.close())

function roleOf(who: DemoWho): string {
  return who.replace(/2$/, '')
}

function methodOf(key: string) {
  return key.split(' ')[0]!.toLowerCase() as 'get' | 'post' | 'put' | 'patch' | 'delete' | 'head'
}

/** HEAD answers carry no body, so only their status can be checked. */
const hasBody = (key: string) => methodOf(key) !== 'head'

function send(recipe: Recipe, target: Target, auth?: string) {
  const path = recipe.path(ids[target])
  const key = Object.entries(recipes).find(([, r]) => r === recipe)![0]
  const method = methodOf(key)
  let req = request(t.app)[method](path)
  if (auth) req = req.set('Authorization', auth)
  if (recipe.body?.type === 'csv')
    return req.set('Content-Type', 'text/csv').send(recipe.body.value as string)
  if (recipe.body?.type === 'jpeg')
    return req.set('Content-Type', 'image/jpeg').send(recipe.body.value as Buffer)
  if (recipe.body) return req.send(recipe.body.value as object)
  return req
}

/** The status a caller should get: 403 by role, 404 out of scope, the recipe's status otherwise. */
function expected(rule: Rule, recipe: Recipe, who: DemoWho, target: Target): number {
  const role = roleOf(who)
  if (rule.roles !== 'public' && !rule.roles.includes(role as never)) return 403
  if (!recipe.closureBound || role === 'office') return recipe.allowed
  if (role === 'inspector') return target === 'signedOff' ? recipe.allowed : 404
  const crewOf = who.endsWith('2') ? 'crew2' : 'crew1'
  const targetCrew = target === 'otherCrew' ? 'crew2' : 'crew1'
  return crewOf === targetCrew ? recipe.allowed : 404
}

describe('permission matrix', () => {
  it('when the app is built, then every registered route has a policy line and a recipe here, and back', () => {
    const registered = [...t.ctx.registeredRoutes].sort()
    expect(registered).toEqual(Object.keys(policy).sort())
    expect(Object.keys(recipes).sort()).toEqual(Object.keys(policy).sort())
  })

  const keys = (Object.keys(policy) as RouteKey[]).filter(
    (k) => recipes[k] !== 'public' && !k.startsWith('DELETE'),
  )

  it.each(keys)('%s: no token → 401', async (key) => {
    const res = await send(recipes[key] as Recipe, 'own')
    expect(res.status).toBe(401)
    if (hasBody(key)) expect(res.body.error.code).toBe('unauthorized')
  })

  it.each(keys)(
    '%s: each role and crew gets what the policy table says, and refusals write nothing',
    async (key) => {
      const rule = policy[key] as Rule
      const recipe = recipes[key] as Recipe
      for (const who of actors) {
        for (const target of ['own', 'signedOff', 'otherCrew'] as Target[]) {
          const auth = await t.tokenFor(who)
          const before = recipe.body ? tableCounts(t.database) : undefined
          const res = await send(recipe, target, auth)
          const want = expected(rule, recipe, who, target)
          expect({ who, target, status: res.status }).toEqual({ who, target, status: want })
          if (res.status >= 400 && hasBody(key))
            expect(res.body.error).toMatchObject({ code: expect.any(String), message: expect.any(String) })
          if (before) expect(tableCounts(t.database)).toEqual(before)
        }
      }
    },
  )

  it('DELETE /api/plan-rows/:rowId: only the office deletes, after the others are refused', async () => {
    const recipe = recipes['DELETE /api/plan-rows/:rowId'] as Recipe
    expect((await send(recipe, 'own')).status).toBe(401)
    for (const who of actors.filter((w) => w !== 'office')) {
      const auth = await t.tokenFor(who)
      const before = tableCounts(t.database)
      expect((await send(recipe, 'own', auth)).status).toBe(403)
      expect(tableCounts(t.database)).toEqual(before)
    }
    expect((await send(recipe, 'own', await t.tokenFor('office'))).status).toBe(204)
    expect((await send(recipe, 'own', await t.tokenFor('office'))).status).toBe(404)
  })

  it('when a splicer lists closures, splices or the board, then only their crew appears', async () => {
    const auth = await t.tokenFor('splicer2')
    const closures = await request(t.app)
      .get(`/api/projects/${ids.own.projectId}/closures?limit=500`)
      .set('Authorization', auth)
    expect(closures.body.items.length).toBeGreaterThan(0)
    expect(closures.body.items.every((c: { crewId: string }) => c.crewId === ids.otherCrew.crewId)).toBe(true)
    const splices = await request(t.app).get('/api/splices?limit=500&current=all').set('Authorization', auth)
    const own = new Set(closures.body.items.map((c: { id: string }) => c.id))
    expect(splices.body.items.every((s: { closureId: string }) => own.has(s.closureId))).toBe(true)
    const inspector = await t.tokenFor('inspector')
    const seen = await request(t.app)
      .get(`/api/projects/${ids.own.projectId}/board?limit=500`)
      .set('Authorization', inspector)
    expect(seen.body.items.length).toBeGreaterThan(0)
    expect(seen.body.items.every((c: { state: string }) => c.state === 'signed_off')).toBe(true)
  })
})

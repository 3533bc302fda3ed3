import fc from 'fast-check'
import request from 'supertest'
import { v7 as uuidv7 } from 'uuid'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { z } from 'zod'
import { cableSchema } from '#shared/schemas/cable'
import { closureSchema } from '#shared/schemas/closure'
import { errorBodySchema } from '#shared/schemas/common'
import { lossBudgetViewSchema, otdrImportResultSchema } from '#shared/schemas/otdr'
import { planRowSchema } from '#shared/schemas/planRow'
import { projectSchema } from '#shared/schemas/project'
import { pushResponseSchema } from '#shared/schemas/sync'
import { traySchema } from '#shared/schemas/tray'
import { crewSchema, userSchema } from '#shared/schemas/user'
import { policy, type RouteKey } from '../../server/policy'
import { demoUser, makeTestApp, type DemoWho, type TestApp } from './support/app'
import { fingerprint, unchangedSince, type Fingerprint } from './support/fingerprint'
import { jpegBytes } from './support/photos'

// Every write route of the policy table (POST, PUT, PATCH, DELETE), called by a role allowed to call it,
// with random and malformed bodies, ids and content types. Whatever arrives, the answer is a documented
// 4xx in the error shape with the database exactly as it was (a hash of every row), or a 2xx whose body is
// what the route documents — never a 5xx. A write route added to the table without a recipe here fails.
// `LIGHTSEAM_FUZZ_RUNS` (default 24 per route) and `LIGHTSEAM_FUZZ_SEED` reproduce a run.

const runs = Number(process.env.LIGHTSEAM_FUZZ_RUNS ?? 24)
const seed = Number(process.env.LIGHTSEAM_FUZZ_SEED ?? Date.now() % 2 ** 31)

interface Ids {
  projectId: string
  cableId: string
  cable2Id: string
  closureId: string
  trayId: string
  rowId: string
  userId: string
  splicerId: string
  crewId: string
  rejectedId: string
}

type BodyKind = 'json' | 'csv' | 'jpeg'
interface Recipe {
  /** Who calls it: a demo user allowed by the policy table, or nobody for public routes. */
  as: DemoWho | 'public'
  /** The real id the path carries, when it has one (fuzzed separately). */
  id?: (ids: Ids) => string
  path: (id: string) => string
  kind: BodyKind
  /** A plausible body the fuzzer starts from (fields replaced, dropped, added); often valid. */
  sample: (ids: Ids) => unknown
  /** Statuses this route documents for a valid request. */
  ok: number[]
  /** The documented body of a 2xx, where the shared schemas describe it. */
  shape?: z.ZodType
  /** 4xx beyond the common ones (400, 404, 409, 413, 415, 422) that this route documents. */
  alsoRefuses?: number[]
}

const json = (r: Omit<Recipe, 'kind'>): Recipe => ({ ...r, kind: 'json' })
const nowIso = () => new Date().toISOString()

const recipes: Record<string, Recipe> = {
  // Public: the answer to a caller without a session or with a wrong password is 401; sign-in is rate limited.
  'POST /api/auth/sign-in': json({
    as: 'public',
    path: () => '/api/auth/sign-in',
    sample: () => ({ email: demoUser('inspector').email, password: 'not the password at all' }),
    shape: z.object({ accessToken: z.string().min(20), user: z.object({ id: z.uuid() }) }),
    ok: [200],
    alsoRefuses: [401, 429],
  }),
  'POST /api/auth/refresh': json({
    as: 'public',
    path: () => '/api/auth/refresh',
    sample: () => ({}),
    ok: [200],
    alsoRefuses: [401],
  }),
  'POST /api/auth/sign-out': json({
    as: 'public',
    path: () => '/api/auth/sign-out',
    sample: () => ({}),
    ok: [204],
  }),
  'POST /api/auth/invitation/accept': json({
    as: 'public',
    path: () => '/api/auth/invitation/accept',
    sample: () => ({ token: 'A'.repeat(43), password: 'a long enough password' }),
    ok: [200],
    alsoRefuses: [401, 410],
  }),
  'POST /api/auth/password-reset': json({
    as: 'public',
    path: () => '/api/auth/password-reset',
    sample: () => ({ email: 'nobody@corvell-ford.invalid' }),
    ok: [202],
    alsoRefuses: [429],
  }),
  'POST /api/auth/password-reset/confirm': json({
    as: 'public',
    path: () => '/api/auth/password-reset/confirm',
    sample: () => ({ token: 'B'.repeat(43), password: 'a long enough password' }),
    ok: [200],
    alsoRefuses: [401, 410],
  }),

  'POST /api/projects': json({
    as: 'office',
    path: () => '/api/projects',
    sample: () => ({ id: uuidv7(), code: 'FZ-01', name: 'Corvell Ford fuzz spur' }),
    shape: projectSchema,
    ok: [201],
  }),
  'PATCH /api/projects/:projectId': json({
    as: 'office',
    id: (i) => i.projectId,
    path: (id) => `/api/projects/${id}`,
    sample: () => ({ name: 'Corvell Ford feeder', otdrToleranceM: 25 }),
    shape: projectSchema,
    ok: [200],
  }),
  'PUT /api/projects/:projectId/loss-budget': json({
    as: 'office',
    id: (i) => i.projectId,
    path: (id) => `/api/projects/${id}/loss-budget`,
    sample: () => ({
      attenuationDbPerKm: 0.4,
      attenuationByWavelength: [{ wavelength: 1550, dbPerKm: 0.3 }],
      spliceLossDb: 0.3,
      connectorPairLossDb: 0.75,
      marginDb: 3,
    }),
    shape: lossBudgetViewSchema,
    ok: [200],
  }),
  'POST /api/projects/:projectId/cables': json({
    as: 'office',
    id: (i) => i.projectId,
    path: (id) => `/api/projects/${id}/cables`,
    sample: () => ({
      id: uuidv7(),
      label: 'FZ-CBL',
      fiberCount: 24,
      construction: 'loose_tube',
      fibersPerUnit: 12,
      fiberType: 'os2',
      lengthM: 800,
    }),
    shape: cableSchema,
    ok: [201],
  }),
  'PATCH /api/cables/:cableId': json({
    as: 'office',
    id: (i) => i.cableId,
    path: (id) => `/api/cables/${id}`,
    sample: () => ({ lengthM: 1200 }),
    shape: cableSchema,
    ok: [200],
  }),
  'POST /api/projects/:projectId/closures': json({
    as: 'office',
    id: (i) => i.projectId,
    path: (id) => `/api/projects/${id}/closures`,
    sample: () => ({ id: uuidv7(), label: 'FZ-01 Mill Lane', kind: 'dome', roadside: false }),
    shape: closureSchema,
    ok: [201],
  }),
  'PATCH /api/closures/:closureId': json({
    as: 'office',
    id: (i) => i.closureId,
    path: (id) => `/api/closures/${id}`,
    sample: () => ({ lat: 41.2, lon: -95.9 }),
    shape: closureSchema,
    ok: [200],
  }),
  'PUT /api/closures/:closureId/assignment': json({
    as: 'foreman',
    id: (i) => i.closureId,
    path: (id) => `/api/closures/${id}/assignment`,
    sample: (i) => ({ splicerIds: [i.splicerId] }),
    ok: [200],
  }),
  'POST /api/closures/:closureId/trays': json({
    as: 'office',
    id: (i) => i.closureId,
    path: (id) => `/api/closures/${id}/trays`,
    sample: () => ({ id: uuidv7(), number: 900 + Math.floor(Math.random() * 99), capacity: 12 }),
    shape: traySchema,
    ok: [201],
  }),
  'PATCH /api/trays/:trayId': json({
    as: 'office',
    id: (i) => i.trayId,
    path: (id) => `/api/trays/${id}`,
    sample: () => ({ capacity: 24 }),
    shape: traySchema,
    ok: [200],
  }),
  'POST /api/closures/:closureId/plan': json({
    as: 'office',
    id: (i) => i.closureId,
    path: (id) => `/api/closures/${id}/plan`,
    sample: (i) => ({
      id: uuidv7(),
      trayId: i.trayId,
      slot: 1,
      cableAId: i.cableId,
      fiberA: 1,
      cableBId: i.cable2Id,
      fiberB: 1,
    }),
    shape: planRowSchema,
    ok: [201],
  }),
  'POST /api/closures/:closureId/plan/csv': {
    as: 'office',
    id: (i) => i.closureId,
    path: (id) => `/api/closures/${id}/plan/csv`,
    kind: 'csv',
    sample: () => 'tray,slot,cable_a,fiber_a,cable_b,fiber_b\n1,1,NOPE,1,NOPE,2\n',
    ok: [201],
  },
  'POST /api/closures/:closureId/plan/generate': json({
    as: 'office',
    id: (i) => i.closureId,
    path: (id) => `/api/closures/${id}/plan/generate`,
    sample: (i) => ({ ranges: [{ cableA: i.cableId, cableB: i.cable2Id, fromA: 1, fromB: 1, count: 2 }] }),
    ok: [201],
  }),
  'PATCH /api/plan-rows/:rowId': json({
    as: 'office',
    id: (i) => i.rowId,
    path: (id) => `/api/plan-rows/${id}`,
    sample: () => ({ slot: 3 }),
    shape: planRowSchema,
    ok: [200],
  }),
  // A real row is deleted once (204), then answers 404; bodies are ignored.
  'DELETE /api/plan-rows/:rowId': json({
    as: 'office',
    id: (i) => i.rowId,
    path: (id) => `/api/plan-rows/${id}`,
    sample: () => ({}),
    ok: [204],
  }),
  'POST /api/sync/push': json({
    as: 'splicer',
    path: () => '/api/sync/push',
    sample: (i) => ({
      clientId: uuidv7(),
      schemaVersion: 1,
      mutations: [
        {
          seq: 1,
          name: 'addNote',
          args: { id: uuidv7(), entity: 'closure', entityId: i.closureId, body: 'Fuzzed note.' },
          baseServerSeq: 0,
          clientTime: nowIso(),
        },
      ],
    }),
    shape: pushResponseSchema,
    ok: [200],
    alsoRefuses: [503],
  }),
  'POST /api/sync/rejected/:rejectedId/reapply': json({
    as: 'office',
    id: (i) => i.rejectedId,
    path: (id) => `/api/sync/rejected/${id}/reapply`,
    sample: () => ({}),
    ok: [200],
  }),
  'PUT /api/photos/:sha256': {
    as: 'splicer',
    id: () => '0'.repeat(64),
    path: (id) => `/api/photos/${id}`,
    kind: 'jpeg',
    sample: () => jpegBytes(32, 32, 8),
    ok: [200, 201],
  },
  'POST /api/users': json({
    as: 'office',
    path: () => '/api/users',
    sample: (i) => ({
      id: uuidv7(),
      email: `fuzz.${Math.random().toString(36).slice(2)}@corvell-ford.invalid`,
      name: 'Fuzz Splicer',
      role: 'splicer',
      crewId: i.crewId,
      password: 'a long enough password',
    }),
    shape: userSchema,
    ok: [201],
  }),
  'PATCH /api/users/:userId': json({
    as: 'office',
    id: (i) => i.userId,
    path: (id) => `/api/users/${id}`,
    sample: () => ({ name: 'Walt Emberley' }),
    shape: userSchema,
    ok: [200],
  }),
  'POST /api/crews': json({
    as: 'office',
    path: () => '/api/crews',
    sample: () => ({ id: uuidv7(), name: 'Crew Fuzz' }),
    shape: crewSchema,
    ok: [201],
  }),
  'PATCH /api/crews/:crewId': json({
    as: 'office',
    id: (i) => i.crewId,
    path: (id) => `/api/crews/${id}`,
    sample: () => ({ name: 'Crew Vault' }),
    shape: crewSchema,
    ok: [200],
  }),
  'PUT /api/crews/:crewId/day': json({
    as: 'foreman',
    id: (i) => i.crewId,
    path: (id) => `/api/crews/${id}/day`,
    sample: (i) => ({ userId: i.splicerId, closureIds: [i.closureId] }),
    ok: [200],
  }),
  'POST /api/projects/:projectId/otdr/imports': json({
    as: 'office',
    id: (i) => i.projectId,
    path: (id) => `/api/projects/${id}/otdr/imports`,
    sample: () => ({
      files: [
        {
          name: 'trace.csv',
          text: 'cable,fiber,from_end,wavelength_nm,fiber_length_m,end_to_end_db,distance_m,loss_db,reflectance_db,kind\n',
        },
      ],
    }),
    shape: otdrImportResultSchema,
    ok: [200, 201],
  }),
  'POST /api/invitations': json({
    as: 'office',
    path: () => '/api/invitations',
    sample: () => ({
      id: uuidv7(),
      email: `invite.${Math.random().toString(36).slice(2)}@corvell-ford.invalid`,
      name: 'Invited Splicer',
      role: 'inspector',
    }),
    ok: [201],
  }),
  'POST /api/projects/:projectId/production-report': json({
    as: 'office',
    id: (i) => i.projectId,
    path: (id) => `/api/projects/${id}/production-report`,
    sample: () => ({ day: '2025-06-10' }),
    ok: [200],
  }),
}

const writeKeys = (Object.keys(policy) as RouteKey[]).filter((k) => !/^(GET|HEAD) /.test(k))

// ---- Generators -------------------------------------------------------------------------------------

const hugeString = fc.constantFrom('x'.repeat(100_000), '\u{1F9F5}'.repeat(30_000), 'é'.repeat(50_001))
const nastyString = fc.oneof(
  fc.string(),
  fc.string({ unit: 'grapheme', maxLength: 40 }),
  fc.constantFrom(
    '',
    ' ',
    '\u0000',
    '\uFEFF',
    '\uD800',
    '=1+1',
    '../../etc/passwd',
    "'; DROP TABLE closures; --",
    '__proto__',
    'constructor',
    '%00',
    '\r\n',
    'ﷺ'.repeat(10),
  ),
  { arbitrary: hugeString, weight: 1 },
)
const junk: fc.Arbitrary<unknown> = fc.letrec((tie) => ({
  value: fc.oneof(
    { depthSize: 'small' },
    fc.constant(null),
    fc.boolean(),
    fc.integer(),
    fc.constantFrom(0, -1, 1e308, -1e308, 2 ** 53 + 1, 0.1 + 0.2, -0),
    fc.double({ noNaN: true, noDefaultInfinity: true }),
    nastyString,
    fc.array(tie('value'), { maxLength: 3 }),
    fc.dictionary(nastyString, tie('value'), { maxKeys: 3 }),
  ),
})).value

/** Nesting deeper than any schema goes, as arrays or objects: built when sent, so a report prints it short. */
class Deep {
  constructor(
    readonly depth: number,
    readonly asArray: boolean,
  ) {}
  /** The JSON text, built without recursion (JSON.stringify of it would overflow the test's own stack). */
  text(): string {
    const [open, close] = this.asArray ? ['[', ']'] : ['{"a":', '}']
    return `${open.repeat(this.depth)}"bottom"${close.repeat(this.depth)}`
  }
  toString() {
    return `Deep(${this.depth}, ${this.asArray ? 'arrays' : 'objects'})`
  }
  [Symbol.for('fast-check/toStringMethod')]() {
    return this.toString()
  }
}
const deep = fc
  .tuple(fc.integer({ min: 50, max: 5000 }), fc.boolean())
  .map(([depth, asArray]) => new Deep(depth, asArray))

/** A sample with some fields replaced by junk, some dropped and some added. */
function nearSample(sample: unknown) {
  if (sample === null || typeof sample !== 'object' || Array.isArray(sample)) return junk
  const keys = Object.keys(sample)
  return fc
    .record({
      replace: keys.length
        ? fc.dictionary(fc.constantFrom(...keys), junk, { maxKeys: Math.min(2, keys.length) })
        : fc.constant({}),
      drop: keys.length ? fc.subarray(keys, { maxLength: Math.min(2, keys.length) }) : fc.constant([]),
      extra: fc.oneof(
        { arbitrary: fc.constant({}), weight: 3 },
        fc.dictionary(fc.string({ minLength: 1 }), junk, { minKeys: 1, maxKeys: 2 }),
      ),
    })
    .map(({ replace, drop, extra }) => {
      const out: Record<string, unknown> = { ...(sample as Record<string, unknown>), ...replace, ...extra }
      for (const key of drop) delete out[key]
      return out
    })
}

const malformedIds = fc.oneof(
  fc.constantFrom(
    '0',
    '-1',
    'null',
    'undefined',
    '00000000-0000-0000-0000-000000000000',
    'ffffffff-ffff-7fff-bfff-ffffffffffff',
    'a'.repeat(5000),
    '%E2%9C%93',
    '%252e%252e',
    '..%2F..%2Fetc',
    '1e309',
    'NaN',
    '%F0%9F%A7%B5',
  ),
  fc.uuid().map(String),
  fc.string({ minLength: 1, maxLength: 80 }).map(encodeURIComponent),
)

/** A raw body sent as it is, with a content type the route may or may not read. */
const rawBodies = fc.record({
  contentType: fc.constantFrom(
    'application/json',
    'application/json; charset=utf-16',
    'application/json; charset=latin1',
    'text/plain',
    'text/csv',
    'application/x-www-form-urlencoded',
    'multipart/form-data; boundary=x',
    'application/xml',
    'image/jpeg',
    'application/octet-stream',
    'application/vnd.api+json',
    '',
    ';;;',
  ),
  body: fc.oneof(
    fc.constantFrom(
      '{',
      '{"a":',
      '[1,2',
      'null',
      'true',
      '"a string"',
      '12',
      '{"__proto__":{"admin":true}}',
      '{"a":1}{"b":2}',
      '\uFEFF{}',
      "{'single': 'quotes'}",
      '{"a": NaN}',
      'label=x&name=y',
      '<closure label="x"/>',
      '\u0000\u0001\u0002',
    ),
    fc.string({ maxLength: 200 }),
    fc.uint8Array({ minLength: 1, maxLength: 200 }).map((b) => Buffer.from(b).toString('latin1')),
  ),
})

// ---- The harness ------------------------------------------------------------------------------------

let t: TestApp
let ids: Ids
let current: Fingerprint
const tally = { requests: 0, refusals: 0, accepted: 0 }
const statuses = new Map<number, number>()
const tokens = new Map<string, string>()

beforeAll(async () => {
  t = makeTestApp()
  const q = <T>(sql: string, ...params: unknown[]) =>
    t.database.sqlite
      .prepare(sql)
      .pluck()
      .get(...params) as T
  const closureId = q<string>("SELECT id FROM closures WHERE label LIKE 'VLT-01%'")
  const projectId = q<string>('SELECT project_id FROM closures WHERE id = ?', closureId)
  const cables = t.database.sqlite
    .prepare('SELECT id FROM cables WHERE project_id = ? ORDER BY label LIMIT 2')
    .pluck()
    .all(projectId) as string[]
  const office = q<string>("SELECT id FROM users WHERE role = 'office'")
  const at = nowIso()
  const client = uuidv7()
  t.database.sqlite
    .prepare('INSERT INTO sync_clients (client_id, user_id, created_at, last_seen_at) VALUES (?, ?, ?, ?)')
    .run(client, office, at, at)
  const rejectedId = t.database.sqlite
    .prepare(
      `INSERT INTO rejected_mutations (client_id, seq, user_id, name, args, code, message, at)
       VALUES (?, 1, ?, 'addNote', ?, 'closure_locked', 'Signed off.', ?)`,
    )
    .run(
      client,
      office,
      JSON.stringify({ id: uuidv7(), entity: 'closure', entityId: closureId, body: 'Quarantined.' }),
      at,
    ).lastInsertRowid
  ids = {
    projectId,
    cableId: cables[0]!,
    cable2Id: cables[1]!,
    closureId,
    trayId: q<string>('SELECT id FROM trays WHERE closure_id = ? ORDER BY number LIMIT 1', closureId),
    rowId: q<string>('SELECT id FROM plan_rows WHERE closure_id = ? AND deleted = 0 LIMIT 1', closureId),
    userId: q<string>("SELECT id FROM users WHERE role = 'inspector'"),
    splicerId: q<string>('SELECT id FROM users WHERE email = ?', demoUser('splicer').email),
    crewId: q<string>('SELECT crew_id FROM closures WHERE id = ?', closureId),
    rejectedId: String(rejectedId),
  }
  for (const who of ['office', 'foreman', 'splicer'] as const) tokens.set(who, await t.tokenFor(who))
  current = fingerprint(t.database)
})

afterAll(async () => {
  await t?.ctx.mailer.idle()
  await t?.close()
  const byStatus = [...statuses.entries()].sort(([a], [b]) => a - b).map(([s, n]) => `${s}×${n}`)
  console.warn(
    `routes fuzz: ${tally.requests} requests to ${writeKeys.length} write routes, ${tally.refusals} refused ` +
      `(nothing written), ${tally.accepted} accepted; statuses ${byStatus.join(' ')}; ` +
      `seed ${seed}, ${runs} runs per route (LIGHTSEAM_FUZZ_SEED, LIGHTSEAM_FUZZ_RUNS)`,
  )
})

const commonRefusals = [400, 404, 409, 413, 415, 422]

interface Attempt {
  path: string
  contentType?: string
  body?: unknown
  raw?: string | Buffer
}

/** Sends one attempt and checks the answer and, on a refusal, the database. */
async function attempt(key: string, recipe: Recipe, a: Attempt): Promise<void> {
  const method = key.split(' ')[0]!.toLowerCase() as 'post' | 'put' | 'patch' | 'delete'
  let req = request(t.app)[method](a.path)
  if (recipe.as !== 'public') req = req.set('Authorization', tokens.get(recipe.as)!)
  if (a.contentType !== undefined) req = req.set('Content-Type', a.contentType)
  const res =
    a.raw !== undefined
      ? await req.send(a.raw)
      : a.body !== undefined
        ? await req.send(a.body as object)
        : await req
  tally.requests += 1
  statuses.set(res.status, (statuses.get(res.status) ?? 0) + 1)
  const what = { key, path: a.path.slice(0, 120), status: res.status }
  const refusals = [...commonRefusals, ...(recipe.alsoRefuses ?? [])]
  if (res.status >= 200 && res.status < 300) {
    expect({ ...what, documented: recipe.ok.includes(res.status) }).toEqual({ ...what, documented: true })
    if (res.status === 204) expect(res.text ?? '').toBe('')
    else {
      expect(res.type).toBe('application/json')
      expect(typeof res.body === 'object' && res.body !== null && !Array.isArray(res.body)).toBe(true)
      expect(errorBodySchema.safeParse(res.body).success).toBe(false)
      if (recipe.shape) {
        const parsed = recipe.shape.safeParse(res.body)
        expect(parsed.success, `${key}: ${parsed.error?.message ?? ''}`).toBe(true)
      }
    }
    tally.accepted += 1
    current = fingerprint(t.database)
    return
  }
  expect({ ...what, documented: refusals.includes(res.status) }).toEqual({ ...what, documented: true })
  expect(errorBodySchema.safeParse(res.body).success, JSON.stringify(res.body).slice(0, 300)).toBe(true)
  expect({ ...what, unchanged: unchangedSince(t.database, current) }).toEqual({ ...what, unchanged: true })
  current = {
    ...current,
    changes: t.database.sqlite.prepare('SELECT total_changes()').pluck().get() as number,
  }
  tally.refusals += 1
}

function serialise(recipe: Recipe, value: unknown): Attempt {
  if (recipe.kind === 'csv')
    return {
      path: '',
      contentType: 'text/csv',
      raw: typeof value === 'string' ? value : JSON.stringify(value),
    }
  if (recipe.kind === 'jpeg')
    return {
      path: '',
      contentType: 'image/jpeg',
      raw: Buffer.isBuffer(value) ? value : Buffer.from(JSON.stringify(value)),
    }
  return { path: '', body: value }
}

describe('fuzzing every write route', () => {
  it('when the policy table lists a write route, then it has a fuzz recipe here, and back', () => {
    expect(Object.keys(recipes).sort()).toEqual([...writeKeys].sort())
    for (const key of writeKeys) {
      const rule = policy[key]
      const recipe = recipes[key]!
      // The recipe calls as a role the table allows.
      if (rule.roles === 'public') expect({ key, as: recipe.as }).toEqual({ key, as: 'public' })
      else
        expect({ key, allowed: (rule.roles as readonly string[]).includes(recipe.as) }).toEqual({
          key,
          allowed: true,
        })
    }
  })

  it.each(writeKeys)(
    '%s: random and near-valid bodies',
    async (key) => {
      const recipe = recipes[key]!
      const bodies = fc.oneof(
        { arbitrary: nearSample(recipe.sample(ids)), weight: 4 },
        { arbitrary: junk, weight: 2 },
        { arbitrary: deep, weight: 1 },
        { arbitrary: fc.constant(recipe.sample(ids)), weight: 1 },
      )
      await fc.assert(
        fc.asyncProperty(bodies, async (body) => {
          const path = recipe.path(recipe.id?.(ids) ?? '')
          if (body instanceof Deep) {
            const contentType = { json: 'application/json', csv: 'text/csv', jpeg: 'image/jpeg' }[recipe.kind]
            await attempt(key, recipe, { path, contentType, raw: body.text() })
            return
          }
          const a = serialise(recipe, body)
          // Non-objects cannot go through supertest's JSON serialiser as they are: send them raw.
          if (recipe.kind === 'json' && (a.body === null || typeof a.body !== 'object'))
            await attempt(key, recipe, {
              path,
              contentType: 'application/json',
              raw: JSON.stringify(a.body) ?? 'null',
            })
          else await attempt(key, recipe, { ...a, path })
        }),
        { numRuns: runs, seed, endOnFailure: true },
      )
    },
    120_000,
  )

  it.each(writeKeys.filter((k) => k.includes('/:')))(
    '%s: malformed and unknown ids in the path',
    async (key) => {
      const recipe = recipes[key]!
      await fc.assert(
        fc.asyncProperty(malformedIds, fc.boolean(), async (id, withSample) => {
          const a = serialise(recipe, withSample ? recipe.sample(ids) : {})
          await attempt(key, recipe, { ...a, path: recipe.path(id) })
        }),
        { numRuns: Math.ceil(runs / 2), seed, endOnFailure: true },
      )
    },
    120_000,
  )

  it.each(writeKeys)(
    '%s: raw bodies under any content type',
    async (key) => {
      const recipe = recipes[key]!
      await fc.assert(
        fc.asyncProperty(rawBodies, async ({ contentType, body }) => {
          await attempt(key, recipe, { path: recipe.path(recipe.id?.(ids) ?? ''), contentType, raw: body })
        }),
        { numRuns: Math.ceil(runs / 2), seed, endOnFailure: true },
      )
    },
    120_000,
  )

  it('when a JSON body is over the 1 MB limit, then 413 on every JSON write route and nothing written', async () => {
    const big = JSON.stringify({ name: 'x'.repeat(1_100_000) })
    for (const key of writeKeys.filter((k) => recipes[k]!.kind === 'json')) {
      const recipe = recipes[key]!
      const before = tally.refusals
      await attempt(key, recipe, {
        path: recipe.path(recipe.id?.(ids) ?? ''),
        contentType: 'application/json',
        raw: big,
      })
      expect({ key, refused: tally.refusals - before }).toEqual({ key, refused: 1 })
    }
    // Prototype pollution never reached the server's objects.
    expect(({} as Record<string, unknown>).admin).toBeUndefined()
  })
})

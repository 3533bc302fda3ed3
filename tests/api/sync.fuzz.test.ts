import fc from 'fast-check'
import request from 'supertest'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { errorBodySchema } from '#shared/schemas/common'
import { mutationNames, pullResponseSchema, pushResponseSchema } from '#shared/schemas/sync'
import { makeTestApp, tableCounts, type TestApp } from './support/app'
import { mutation, newClientId, plannedSlot, pushOk, spliceArgs, userId } from './support/sync'

// Whatever arrives at push or pull, the answer is a documented 4xx with the error shape (and nothing
// written) or a 200 of the documented shape — never a 5xx.

let t: TestApp
let splicerAuth: string
let foremanAuth: string
const ownClient = newClientId()
const foremanClient = newClientId()
let validSplice: Record<string, unknown>

beforeAll(async () => {
  t = makeTestApp()
  splicerAuth = await t.tokenFor('splicer')
  foremanAuth = await t.tokenFor('foreman')
  validSplice = spliceArgs(plannedSlot(t, 'VLT-01', 2, 50), userId(t, 'splicer'), ownClient)
  await pushOk(t, 'foreman', foremanClient, [
    mutation(1, 'addNote', {
      id: newClientId(),
      entity: 'closure',
      entityId: validSplice.closureId,
      body: 'x',
    }),
  ])
})
afterAll(() => t.close())

/** A note on the vault the foreman may write. */
const validNote = () => ({
  id: newClientId(),
  entity: 'closure',
  entityId: validSplice.closureId,
  body: 'Fuzz note.',
})

const junk = fc.oneof(
  fc.constant(null),
  fc.boolean(),
  fc.integer(),
  fc.double(),
  fc.string(),
  fc.constant(''),
  fc.constant('__proto__'),
  fc.array(fc.integer(), { maxLength: 3 }),
  fc.dictionary(fc.string(), fc.integer(), { maxKeys: 3 }),
)

// Near-valid args: a real splice with, now and then, some fields replaced, dropped or added.
const none = <T>(value: T) => ({ arbitrary: fc.constant(value), weight: 2 })
const args = fc.oneof(fc.dictionary(fc.string(), junk, { maxKeys: 5 }), {
  weight: 3,
  arbitrary: fc
    .record({
      replace: fc.oneof(
        none({}),
        fc.dictionary(
          fc.constantFrom(
            'id',
            'slot',
            'lossDb',
            'fiberA',
            'trayId',
            'cableBId',
            'attempt',
            'supersedesId',
            'splicerId',
          ),
          junk,
          { minKeys: 1, maxKeys: 2 },
        ),
      ),
      drop: fc.oneof(
        none([]),
        fc.subarray(['id', 'closureId', 'trayId', 'method', 'splicedAt'], { minLength: 1 }),
      ),
      extra: fc.oneof(none({}), fc.dictionary(fc.string({ minLength: 1 }), junk, { minKeys: 1, maxKeys: 2 })),
    })
    .map(({ replace, drop, extra }) => {
      const out: Record<string, unknown> = { ...validSplice, id: newClientId(), ...replace, ...extra }
      for (const key of drop) delete out[key]
      return out
    }),
})

const pushedMutation = fc.record(
  {
    seq: fc.oneof(fc.integer({ min: -2, max: 400 }), junk),
    name: fc.oneof(fc.constantFrom(...mutationNames), fc.string()),
    args: fc.oneof(args, junk),
    baseServerSeq: fc.oneof(fc.nat(1000), junk),
    clientTime: fc.oneof(fc.constant('2025-06-11T08:15:30.000+01:00'), fc.string()),
    unknownKey: junk,
  },
  { requiredKeys: ['seq', 'name', 'args', 'baseServerSeq', 'clientTime'] },
)

const pushBody = fc.oneof(
  fc.record(
    {
      clientId: fc.oneof(fc.constantFrom(ownClient, foremanClient), fc.uuid(), fc.string()),
      schemaVersion: fc.oneof(fc.constant(1), junk),
      mutations: fc.oneof(fc.array(pushedMutation, { maxLength: 8 }), junk),
      extra: junk,
    },
    { requiredKeys: ['clientId', 'schemaVersion', 'mutations'] },
  ),
  fc.jsonValue(),
)

// Raw text so that __proto__ keys and broken JSON reach the server as sent.
const rawBody = fc.oneof(
  pushBody.map((body) => JSON.stringify(body) ?? 'null'),
  fc.string(),
  fc.constant('{"__proto__": {"admin": true}, "clientId": "x"}'),
  fc.constant(`{"clientId":"${ownClient}","schemaVersion":1,"mutations":[{"__proto__":{"seq":1}}]}`),
)

const documented = new Set([200, 400, 403, 413, 415])

describe('bad input to push and pull', () => {
  it('when push gets arbitrary bodies, then a documented 4xx with nothing written, or a 200 of the push shape', async () => {
    await fc.assert(
      fc.asyncProperty(rawBody, fc.boolean(), fc.boolean(), async (body, asForeman, jsonType) => {
        const before = tableCounts(t.database)
        const res = await request(t.app)
          .post('/api/sync/push')
          .set('Authorization', asForeman ? foremanAuth : splicerAuth)
          .set('Content-Type', jsonType ? 'application/json' : 'text/plain')
          .send(body)
        expect(documented.has(res.status), `${res.status} ${JSON.stringify(res.body)}`).toBe(true)
        if (res.status === 200) {
          const parsed = pushResponseSchema.parse(res.body)
          expect(parsed.results.length).toBeGreaterThan(0)
        } else {
          errorBodySchema.parse(res.body)
          expect(tableCounts(t.database)).toEqual(before)
        }
      }),
      { numRuns: 200 },
    )
  })

  it('when push gets well-formed batches of arbitrary mutations, then 200 with an answer per mutation, never a 5xx', async () => {
    const entry = fc.record({
      name: fc.oneof(
        { arbitrary: fc.constant('createSplice' as const), weight: 4 },
        fc.constantFrom(...mutationNames),
      ),
      args,
      // Mostly in order; now and then a repeat or a skip.
      step: fc.constantFrom(1, 1, 1, 1, 1, 0, 2),
      baseServerSeq: fc.nat(50),
    })
    const seen = new Set<string>()
    await fc.assert(
      fc.asyncProperty(
        fc.array(entry, { minLength: 1, maxLength: 8 }),
        fc.boolean(),
        async (entries, asForeman) => {
          let seq = 0
          const mutations = entries.map((e) => {
            seq = Math.max(1, seq + e.step)
            return { ...mutation(seq, e.name, e.args as Record<string, unknown>, e.baseServerSeq) }
          })
          const res = await request(t.app)
            .post('/api/sync/push')
            .set('Authorization', asForeman ? foremanAuth : splicerAuth)
            .send({ clientId: newClientId(), schemaVersion: 1, mutations })
          expect(res.status, JSON.stringify(res.body)).toBe(200)
          const parsed = pushResponseSchema.parse(res.body)
          expect(parsed.results).toHaveLength(mutations.length)
          for (const result of parsed.results) seen.add(result.status)
        },
      ),
      {
        numRuns: 150,
        // Always among the runs, whatever the seed: a repeated seq of an applied change (duplicate; a refused
        // one is answered as refused again) and a skipped seq (gap).
        examples: [
          [
            [
              { name: 'addNote', args: validNote(), step: 1, baseServerSeq: 0 },
              { name: 'addNote', args: validNote(), step: 0, baseServerSeq: 0 },
            ],
            true,
          ],
          [[{ name: 'addNote', args: {}, step: 2, baseServerSeq: 0 }], false],
        ],
      },
    )
    // The generator reaches the apply path: some changes apply, others are refused and quarantined.
    expect(seen).toEqual(new Set(['applied', 'rejected', 'duplicate', 'gap']))
  })

  it('when pull gets arbitrary queries, then 400 with the error shape or a 200 of the pull shape, and nothing written', async () => {
    const key = fc.oneof(fc.constantFrom('cursor', 'limit', 'clientId'), fc.string({ maxLength: 8 }))
    const value = fc.oneof(
      fc.integer({ min: -5, max: 5000 }).map(String),
      fc.uuid(),
      fc.string({ maxLength: 12 }),
    )
    await fc.assert(
      fc.asyncProperty(
        fc.array(fc.tuple(key, value), { maxLength: 4 }),
        fc.boolean(),
        async (pairs, asForeman) => {
          const query = pairs.map(([k, v]) => `${encodeURIComponent(k)}=${encodeURIComponent(v)}`).join('&')
          const before = tableCounts(t.database)
          const res = await request(t.app)
            .get(`/api/sync/pull?${query}`)
            .set('Authorization', asForeman ? foremanAuth : splicerAuth)
          expect([200, 400], `${res.status} ${query}`).toContain(res.status)
          if (res.status === 200) pullResponseSchema.parse(res.body)
          else errorBodySchema.parse(res.body)
          expect(tableCounts(t.database)).toEqual(before)
        },
      ),
      { numRuns: 200 },
    )
  })
})

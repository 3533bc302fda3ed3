import fc from 'fast-check'
import { v7 as uuidv7 } from 'uuid'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { ProjectLimits } from '#shared/schemas/project'
import { recomputeClosureTotals } from '../../server/repositories/splices'
import { makeTestApp, type TestApp } from './support/app'
import {
  mutation,
  newClientId,
  plannedSlot,
  pushOk,
  spliceArgs,
  userId,
  type PlannedSlot,
} from './support/sync'

// closure_totals is kept incrementally by insertSplice and rebuilt by the sync writes that can move several
// totals at once. Whatever a crew pushes, the maintained row must equal a rebuild from the rows.

let t: TestApp
let limits: ProjectLimits
let slots: PlannedSlot[]
const client = newClientId()
let nextSeq = 1

type Command =
  | { kind: 'create'; slot: number; loss: number | null; offPlan: boolean }
  | { kind: 'resplice'; pick: number; loss: number }
  | { kind: 'update'; pick: number; loss: number | null; slot: number | null }
  | { kind: 'delete'; pick: number }
  | { kind: 'photo'; pick: number }
  | { kind: 'unphoto'; pick: number }

const loss = fc.integer({ min: -20, max: 500 }).map((n) => n / 1000)
const command: fc.Arbitrary<Command> = fc.oneof(
  fc.record({
    kind: fc.constant('create' as const),
    slot: fc.nat(23),
    loss: fc.option(loss),
    offPlan: fc.boolean(),
  }),
  fc.record({ kind: fc.constant('resplice' as const), pick: fc.nat(), loss }),
  fc.record({
    kind: fc.constant('update' as const),
    pick: fc.nat(),
    loss: fc.option(loss),
    slot: fc.option(fc.nat(23)),
  }),
  fc.record({ kind: fc.constant('delete' as const), pick: fc.nat() }),
  fc.record({ kind: fc.constant('photo' as const), pick: fc.nat() }),
  fc.record({ kind: fc.constant('unphoto' as const), pick: fc.nat() }),
)

const one = <T>(sql: string, ...params: unknown[]) => t.database.sqlite.prepare(sql).get(...params) as T
const all = <T>(sql: string, ...params: unknown[]) => t.database.sqlite.prepare(sql).all(...params) as T[]

beforeAll(() => {
  t = makeTestApp()
  limits = JSON.parse(one<{ limits: string }>('SELECT limits FROM projects').limits) as ProjectLimits
  // Tray 2 of the vault (empty) and tray 5 of the handhole (empty): fresh slots in two closures.
  slots = [
    ...Array.from({ length: 12 }, (_, i) => plannedSlot(t, 'VLT-01', 2, i + 1)),
    ...Array.from({ length: 12 }, (_, i) => plannedSlot(t, 'HH-02', 5, i + 1)),
  ]
})
afterAll(() => t.close())

/** Turns abstract commands into mutations over the splices and links that exist when each is made. */
function toMutations(commands: Command[]) {
  const me = userId(t, 'splicer')
  type Live = { id: string; tray_id: string; slot: number; attempt: number; pair: Record<string, unknown> }
  const live = all<
    Omit<Live, 'pair'> & { cableAId: string; fiberA: number; cableBId: string; fiberB: number }
  >(
    `SELECT id, tray_id, slot, attempt, cable_a_id AS cableAId, fiber_a AS fiberA, cable_b_id AS cableBId,
       fiber_b AS fiberB FROM splices
     WHERE deleted = 0 AND is_current = 1 AND closure_id IN (?, ?)`,
    slots[0]!.closureId,
    slots[12]!.closureId,
  ).map(({ cableAId, fiberA, cableBId, fiberB, ...row }): Live => ({
    ...row,
    pair: { cableAId, fiberA, cableBId, fiberB },
  }))
  const links = all<{ id: string }>("SELECT id FROM photo_links WHERE deleted = 0 AND entity = 'splice'")
  const made: ReturnType<typeof mutation>[] = []
  const at = (pick: number) => live[pick % live.length]
  for (const c of commands) {
    if (c.kind === 'create') {
      const slot = slots[c.slot]!
      const args = spliceArgs(c.offPlan ? { ...slot, fiberB: slot.fiberB + 1 } : slot, me, client, {
        lossDb: c.loss,
      })
      made.push(mutation(nextSeq++, 'createSplice', args))
      const { cableAId, fiberA, cableBId, fiberB } = args
      live.push({
        id: args.id as string,
        tray_id: slot.trayId,
        slot: slot.slot,
        attempt: 1,
        pair: { cableAId, fiberA, cableBId, fiberB },
      })
      continue
    }
    const target = at(c.pick)
    if (!target) continue
    if (c.kind === 'resplice') {
      const slot = slots.find((s) => s.trayId === target.tray_id) ?? slots[0]!
      const args = spliceArgs({ ...slot, slot: target.slot }, me, client, {
        ...target.pair,
        lossDb: c.loss,
        attempt: target.attempt + 1,
        supersedesId: target.id,
        respliceReason: 'high_loss',
      })
      made.push(mutation(nextSeq++, 'resplice', args))
      live.push({ ...target, id: args.id as string, attempt: target.attempt + 1 })
    } else if (c.kind === 'update') {
      const fields: Record<string, unknown> = { lossDb: c.loss }
      if (c.slot !== null) fields.slot = c.slot + 1
      made.push(mutation(nextSeq++, 'updateSplice', { id: target.id, fields }))
    } else if (c.kind === 'delete') {
      made.push(mutation(nextSeq++, 'deleteSplice', { id: target.id }))
    } else if (c.kind === 'photo') {
      const sha256 = (c.pick % 4).toString(16).repeat(64)
      made.push(
        mutation(nextSeq++, 'addPhotoLink', { id: uuidv7(), sha256, entity: 'splice', entityId: target.id }),
      )
    } else if (links.length > 0) {
      made.push(mutation(nextSeq++, 'removePhotoLink', { id: links[c.pick % links.length]!.id }))
    }
  }
  return made
}

/** Every live splice's plan_mismatch flag follows its slot's plan row, and both closures' totals equal a rebuild. */
function expectTotalsAndFlagsRebuilt(): void {
  // A splice is flagged plan_mismatch exactly when its slot's plan row joins another pair (or none).
  const flagged = all<{ flagged: number; off: number }>(
    `SELECT instr(s.flags, '"plan_mismatch"') > 0 AS flagged,
       (p.id IS NULL OR NOT ((p.cable_a_id = s.cable_a_id AND p.fiber_a = s.fiber_a AND p.cable_b_id = s.cable_b_id
         AND p.fiber_b = s.fiber_b) OR (p.cable_a_id = s.cable_b_id AND p.fiber_a = s.fiber_b
         AND p.cable_b_id = s.cable_a_id AND p.fiber_b = s.fiber_a))) AS off
     FROM splices s LEFT JOIN plan_rows p
       ON p.closure_id = s.closure_id AND p.tray_id = s.tray_id AND p.slot = s.slot AND p.deleted = 0
     WHERE s.deleted = 0`,
  )
  for (const row of flagged) expect(row.flagged).toBe(row.off)
  for (const closureId of [slots[0]!.closureId, slots[12]!.closureId]) {
    const kept = one('SELECT * FROM closure_totals WHERE closure_id = ?', closureId)
    t.database.sqlite.transaction(() => recomputeClosureTotals(t.database.sqlite, closureId, limits))()
    expect(one('SELECT * FROM closure_totals WHERE closure_id = ?', closureId)).toEqual(kept)
  }
}

describe('closure totals under random pushes', () => {
  it('when any sequence of splice, re-splice, edit, delete and photo mutations is pushed, then totals equal a rebuild', async () => {
    const statuses = { applied: 0, other: 0 }
    await fc.assert(
      fc.asyncProperty(fc.array(command, { minLength: 1, maxLength: 25 }), async (commands) => {
        const mutations = toMutations(commands)
        if (mutations.length === 0) return
        const body = await pushOk(t, 'splicer', client, mutations)
        expect(body.results).toHaveLength(mutations.length)
        for (const result of body.results) statuses[result.status === 'applied' ? 'applied' : 'other'] += 1
        expectTotalsAndFlagsRebuilt()
      }),
      { numRuns: 40 },
    )
    // Most commands are meant to apply; a run of refusals would prove nothing about the totals.
    expect(statuses.applied).toBeGreaterThan(3 * statuses.other)
  })

  it('when one batch brings many new splices to a closure, on plan, off plan and in the wrong slot, then flags and totals hold', async () => {
    // More than BatchPlans.wholePlanAfter new splices in each closure, so the batch reads the whole plan.
    const commands: Command[] = [
      ...Array.from({ length: 10 }, (_, i): Command => ({
        kind: 'create',
        slot: i,
        loss: 0.02,
        offPlan: i % 3 === 1,
      })),
      ...Array.from({ length: 8 }, (_, i): Command => ({
        kind: 'create',
        slot: 12 + i,
        loss: null,
        offPlan: i === 5,
      })),
      { kind: 'create', slot: 0, loss: 0.03, offPlan: false },
      { kind: 'resplice', pick: 0, loss: 0.01 },
      { kind: 'update', pick: 1, loss: 0.04, slot: 7 },
    ]
    const mutations = toMutations(commands)
    const body = await pushOk(t, 'splicer', client, mutations)
    expect(body.results.map((r) => r.status)).toEqual(mutations.map(() => 'applied'))
    expectTotalsAndFlagsRebuilt()
  })
})

import fc from 'fast-check'
import { describe, expect, it } from 'vitest'
import { reviewItems, signOffChecklist, type ReviewedSplice } from '#shared/domain/review'
import { defaultProjectLimits, type PhotoRules } from '#shared/schemas/project'
import { buildPlanRow, buildSplice, ids, testId } from './builders'

// The checklist's three items (every planned splice logged, every flag resolved or explained, the photo
// rules met) are this product's rule, after common practice for closure close-out; the loss limits come
// from defaultProjectLimits (0.3 dB maximum from TIA-568.3-D, from memory; 0.1 dB target, common practice).

const limits = defaultProjectLimits
const noPhotos: PhotoRules = { perSplice: 'none', perTray: false, closedClosure: false }
const plan = [1, 2, 3].map((slot) =>
  buildPlanRow({ id: testId(100 + slot), slot, fiberA: slot, fiberB: slot }),
)

function splice(slot: number, overrides: Partial<ReviewedSplice> = {}): ReviewedSplice {
  return {
    ...buildSplice({ id: testId(200 + slot), slot, fiberA: slot, fiberB: slot }),
    reviewState: null,
    ...overrides,
  }
}

const check = (splices: ReviewedSplice[], rules = noPhotos, counts = {}) =>
  signOffChecklist(plan, splices, limits, { counts, rules })
const item = (result: ReturnType<typeof check>, key: string) => result.items.find((i) => i.key === key)!

describe('reviewItems', () => {
  it('when splices are on target and on plan, then nothing waits for review', () => {
    expect(reviewItems(plan, [splice(1), splice(2), splice(3)], limits)).toEqual([])
  })

  it('when a splice reads over the 0.1 dB target on its first attempt, then it is open with advice to re-make or accept', () => {
    const [over] = reviewItems(plan, [splice(1, { lossDb: 0.117 }), splice(2)], limits)
    expect(over!.flags).toEqual(['over_target'])
    expect(over!.open).toBe(true)
    expect(over!.mustRemake).toBe(false)
    expect(over!.advice.join(' ')).toMatch(/send it back for a re-splice, or accept it/)
  })

  it('when a splice reads over the 0.3 dB maximum, then accepting it is not offered', () => {
    const [worst] = reviewItems(plan, [splice(1, { lossDb: 0.31 })], limits)
    expect(worst!.mustRemake).toBe(true)
    expect(worst!.flags).toContain('over_maximum')
  })

  it('when a slot holds a pair the plan does not put there, then it is a wrong pair to send back', () => {
    const [wrong] = reviewItems(plan, [splice(3, { fiberB: 9 })], limits)
    expect(wrong!.flags).toContain('plan_mismatch')
    expect(wrong!.advice.join(' ')).toMatch(/Not the pair the plan puts in this slot/)
  })

  it('when a re-splice on target carries its reason, then it is explained and closed; superseded attempts are skipped', () => {
    const first = splice(1, { lossDb: 0.38 })
    const again = splice(1, {
      id: testId(301),
      lossDb: 0.03,
      attempt: 2,
      supersedesId: first.id,
      respliceReason: 'bad_cleave',
    })
    const items = reviewItems(plan, [first, again], limits)
    expect(items.map((i) => [i.splice.id, i.flags, i.open])).toEqual([[again.id, ['resplice'], false]])
  })

  it('when the foreman accepts an open splice, then it is closed; sent back, it stays open', () => {
    const accepted = reviewItems(plan, [splice(1, { lossDb: 0.117, reviewState: 'accepted' })], limits)
    expect(accepted[0]!.open).toBe(false)
    const sent = reviewItems(plan, [splice(1, { lossDb: 0.117, reviewState: 'sent_back' })], limits)
    expect(sent[0]!.open).toBe(true)
  })
})

describe('signOffChecklist', () => {
  it('when every planned slot is logged on target and no photo is asked for, then all three items pass', () => {
    const result = check([splice(1), splice(2), splice(3)])
    expect(result.ok).toBe(true)
    expect(result.items.map((i) => i.ok)).toEqual([true, true, true])
  })

  it('when a planned slot is still to do, then the first item fails and says how many are logged', () => {
    const result = check([splice(1), splice(2)])
    expect(result.ok).toBe(false)
    expect(item(result, 'all_logged')).toMatchObject({ ok: false, detail: '2 of 3 planned splices logged.' })
  })

  it('when a splice was sent back, then flags are not resolved until it is made again', () => {
    const sent = check([splice(1, { lossDb: 0.117, reviewState: 'sent_back' }), splice(2), splice(3)])
    expect(item(sent, 'flags_resolved')).toMatchObject({
      ok: false,
      detail: '1 splice sent back, waiting for a re-splice.',
    })
    const remade = check([
      splice(1, { lossDb: 0.117, reviewState: 'sent_back' }),
      splice(1, {
        id: testId(301),
        lossDb: 0.04,
        attempt: 2,
        supersedesId: testId(201),
        respliceReason: 'high_loss',
      }),
      splice(2),
      splice(3),
    ])
    expect(remade.ok).toBe(true)
  })

  it('when the project asks for tray and closed-closure photos (common practice), then missing ones are named', () => {
    const rules: PhotoRules = { perSplice: 'over_target', perTray: true, closedClosure: true }
    const splices = [splice(1, { lossDb: 0.117, reviewState: 'accepted' }), splice(2), splice(3)]
    const missing = check(splices, rules)
    expect(item(missing, 'photos')).toMatchObject({
      ok: false,
      detail: 'Missing: 1 splice photo, 1 tray photo, the closed-closure photo.',
    })
    const taken = check(splices, rules, {
      perSplice: { [testId(201)]: 1 },
      perTray: { [ids.tray1]: 1 },
      closure: 1,
    })
    expect(taken.ok).toBe(true)
  })

  it('when splices vary at random, then the checklist passes exactly when each of its three rules holds', () => {
    fc.assert(
      fc.property(
        fc.array(
          fc.record({
            slot: fc.constantFrom(1, 2, 3),
            lossDb: fc.constantFrom(0.02, 0.09, 0.117, 0.31),
            review: fc.constantFrom<ReviewedSplice['reviewState']>(null, 'accepted', 'sent_back'),
          }),
          { maxLength: 3 },
        ),
        (rows) => {
          const bySlot = new Map(rows.map((r) => [r.slot, r]))
          const splices = [...bySlot.values()].map((r) =>
            splice(r.slot, { lossDb: r.lossDb, reviewState: r.review }),
          )
          const result = check(splices)
          const allLogged = bySlot.size === 3
          // A splice sent back blocks sign-off whatever it reads, until it is made again.
          const resolved = splices.every(
            (s) => s.reviewState === 'accepted' || ((s.lossDb ?? 0) <= 0.1 && s.reviewState !== 'sent_back'),
          )
          expect(result.ok).toBe(allLogged && resolved)
          expect(item(result, 'all_logged').ok).toBe(allLogged)
          expect(item(result, 'flags_resolved').ok).toBe(resolved)
        },
      ),
    )
  })
})

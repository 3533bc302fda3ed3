import { describe, expect, it } from 'vitest'
import { assessSplice, currentAttempts, limitFor, type AssessmentContext } from '#shared/domain/acceptance'
import { bidirectionalAverage } from '#shared/domain/loss'
import { defaultProjectLimits, type ProjectLimits } from '#shared/schemas/project'
import { buildPlanRow, buildSplice, ids, testId } from './builders'

const limits = defaultProjectLimits

function context(overrides: Partial<AssessmentContext> = {}): AssessmentContext {
  return { planRow: buildPlanRow(), otherCurrentSplices: [], closureState: 'in_progress', ...overrides }
}

describe('loss against the project limits', () => {
  it('when the estimate is 0.02 dB on plan, then the splice is ok with no flags', () => {
    const result = assessSplice(buildSplice({ lossDb: 0.02 }), limits, context())
    expect(result).toEqual({
      status: 'ok',
      flags: [],
      lossDb: 0.02,
      basis: 'estimate',
      wavelength: null,
      limit: limits.estimate,
      needsReview: false,
    })
  })

  it('when the estimate is exactly the 0.10 dB target, then it is not over target (dB compared with a tolerance)', () => {
    expect(assessSplice(buildSplice({ lossDb: 0.1 }), limits, context()).status).toBe('ok')
    expect(assessSplice(buildSplice({ lossDb: 0.1 + 1e-12 }), limits, context()).status).toBe('ok')
    expect(assessSplice(buildSplice({ lossDb: 0.101 }), limits, context()).status).toBe('over_target')
  })

  it('when the estimate is 0.15 dB on the first attempt, then it is over target and needs review', () => {
    const result = assessSplice(buildSplice({ lossDb: 0.15 }), limits, context())
    expect(result.status).toBe('over_target')
    expect(result.flags).toEqual(['over_target'])
    expect(result.needsReview).toBe(true)
  })

  it('when the estimate is 0.35 dB, then it is over the 0.3 dB maximum (ANSI/TIA-568.3-D, from memory)', () => {
    const result = assessSplice(buildSplice({ lossDb: 0.35 }), limits, context())
    expect(result.status).toBe('over_maximum')
    expect(result.flags).toEqual(['over_target', 'over_maximum'])
  })

  it('when attempt 3 is still over target with a reason, then it is accepted with a flag (published specifications)', () => {
    const third = buildSplice({
      lossDb: 0.18,
      attempt: 3,
      supersedesId: testId(199),
      respliceReason: 'high_loss',
      acceptReason: 'Fiber ends fragile; three clean cleaves gave 0.17–0.19 dB.',
    })
    const result = assessSplice(third, limits, context())
    expect(result.status).toBe('accepted_with_flag')
    expect(result.flags).toEqual(['over_target', 'attempts_exhausted', 'resplice'])
  })

  it('when attempt 3 is over target without a reason, then it stays over target and may be accepted', () => {
    const result = assessSplice(buildSplice({ lossDb: 0.18, attempt: 3 }), limits, context())
    expect(result.status).toBe('over_target')
    expect(result.flags).toContain('attempts_exhausted')
    expect(
      assessSplice(buildSplice({ lossDb: 0.18, attempt: 3, acceptReason: '  ' }), limits, context()).status,
    ).toBe('over_target')
  })

  it('when attempt 2 is over target with a reason, then the reason does not accept it yet', () => {
    const result = assessSplice(
      buildSplice({ lossDb: 0.18, attempt: 2, acceptReason: 'tried' }),
      limits,
      context(),
    )
    expect(result.status).toBe('over_target')
    expect(result.flags).not.toContain('attempts_exhausted')
  })

  it('when attempt 4 is over the maximum with a reason, then it is never accepted', () => {
    const result = assessSplice(
      buildSplice({ lossDb: 0.4, attempt: 4, acceptReason: 'no slack left' }),
      limits,
      context(),
    )
    expect(result.status).toBe('over_maximum')
    expect(result.flags).not.toContain('attempts_exhausted')
  })

  it('when the project sets its own limits, then they are used, not built-in numbers', () => {
    const strict: ProjectLimits = {
      estimate: { standardMaxDb: 0.15, contractTargetDb: 0.05 },
      perWavelength: [],
      attemptsBeforeAcceptWithFlag: 2,
    }
    expect(assessSplice(buildSplice({ lossDb: 0.08 }), strict, context()).status).toBe('over_target')
    expect(assessSplice(buildSplice({ lossDb: 0.2 }), strict, context()).status).toBe('over_maximum')
    expect(
      assessSplice(
        buildSplice({ lossDb: 0.08, attempt: 2, acceptReason: 'ok by engineer' }),
        strict,
        context(),
      ).status,
    ).toBe('accepted_with_flag')
  })

  it('when no loss was read (mechanical splice), then the status says so and no loss flag is raised', () => {
    const result = assessSplice(buildSplice({ lossDb: null, method: 'mechanical' }), limits, context())
    expect(result).toMatchObject({ status: 'no_reading', flags: [], lossDb: null, basis: null, limit: null })
  })
})

describe('measured loss (OTDR)', () => {
  it('when a bidirectional average exists, then it decides the status against that wavelength limit', () => {
    const measured = { wavelength: 1550 as const, result: bidirectionalAverage(0.1, 0.2) }
    const result = assessSplice(buildSplice({ lossDb: 0.02 }), limits, context({ measured }))
    expect(result).toMatchObject({ status: 'over_target', basis: 'measured', wavelength: 1550 })
    expect(result.lossDb).toBeCloseTo(0.15, 9)
  })

  it('when one direction reads a gain, then the splice is judged on the average and flagged as a gainer (common practice)', () => {
    const measured = { wavelength: 1310 as const, result: bidirectionalAverage(-0.243, 0.343) }
    const result = assessSplice(buildSplice({ lossDb: 0.04 }), limits, context({ measured }))
    expect(result.status).toBe('ok')
    expect(result.flags).toEqual(['gainer_one_way'])
    expect(result.needsReview).toBe(false)
  })

  it('when both directions read a gain, then it is flagged as a measurement error and the estimate decides', () => {
    const measured = { wavelength: 1550 as const, result: bidirectionalAverage(-0.05, -0.02) }
    const result = assessSplice(buildSplice({ lossDb: 0.03 }), limits, context({ measured }))
    expect(result).toMatchObject({
      status: 'ok',
      basis: 'estimate',
      flags: ['both_negative'],
      needsReview: true,
    })
  })

  it('when only one direction was measured, then it does not decide the status and is flagged one-way', () => {
    const measured = { wavelength: 1550 as const, result: bidirectionalAverage(0.5, null) }
    const result = assessSplice(buildSplice({ lossDb: 0.03 }), limits, context({ measured }))
    expect(result).toMatchObject({ status: 'ok', basis: 'estimate', flags: ['one_way_only'] })
  })

  it('when two wavelengths are measured, then the worse one decides', () => {
    const measured = [
      { wavelength: 1310 as const, result: bidirectionalAverage(0.04, 0.06) },
      { wavelength: 1550 as const, result: bidirectionalAverage(0.3, 0.4) },
    ]
    const result = assessSplice(buildSplice({ lossDb: 0.03 }), limits, context({ measured }))
    expect(result).toMatchObject({ status: 'over_maximum', wavelength: 1550 })
    expect(result.lossDb).toBeCloseTo(0.35, 9)
  })

  it('when a wavelength has no limits of its own, then the estimate limits apply', () => {
    expect(limitFor(limits, 1625)).toBe(limits.estimate)
    expect(limitFor(limits, 1550)).toMatchObject({ wavelength: 1550 })
  })

  it('when the estimate and the average differ by more than allowed, then it is flagged', () => {
    const measured = { wavelength: 1550 as const, result: bidirectionalAverage(0.08, 0.1) }
    const flagged = assessSplice(
      buildSplice({ lossDb: 0.01 }),
      limits,
      context({ measured, disagreementDb: 0.05 }),
    )
    expect(flagged.flags).toContain('estimate_disagrees')
    const close = assessSplice(
      buildSplice({ lossDb: 0.04 }),
      limits,
      context({ measured, disagreementDb: 0.05 }),
    )
    expect(close.flags).not.toContain('estimate_disagrees')
  })
})

describe('plan, fiber and slot checks', () => {
  it('when the slot has no plan row, then the splice is a plan mismatch', () => {
    expect(assessSplice(buildSplice(), limits, context({ planRow: null })).flags).toEqual(['plan_mismatch'])
  })

  it('when the fiber pair differs from the slot plan row, then the splice is a plan mismatch', () => {
    const result = assessSplice(buildSplice({ fiberB: 2 }), limits, context())
    expect(result.flags).toEqual(['plan_mismatch'])
  })

  it('when the pair was logged with the sides swapped, then it still matches the plan', () => {
    const swapped = buildSplice({ cableAId: ids.cableB, fiberA: 1, cableBId: ids.cableA, fiberB: 1 })
    expect(assessSplice(swapped, limits, context()).flags).toEqual([])
  })

  it('when another current splice of the closure uses one of the fibers, then the fiber is reused', () => {
    const other = buildSplice({ id: testId(300), slot: 2, fiberA: 1, cableBId: ids.cableB, fiberB: 9 })
    const result = assessSplice(buildSplice(), limits, context({ otherCurrentSplices: [other] }))
    expect(result.flags).toEqual(['fiber_reused'])
  })

  it('when a fiber of side B was used as side A elsewhere, then it is reused too', () => {
    const other = buildSplice({
      id: testId(300),
      slot: 2,
      cableAId: ids.cableB,
      fiberA: 1,
      cableBId: ids.cableA,
      fiberB: 7,
    })
    expect(assessSplice(buildSplice(), limits, context({ otherCurrentSplices: [other] })).flags).toEqual([
      'fiber_reused',
    ])
  })

  it('when another current splice holds the same tray slot with a different pair, then the slot is reused', () => {
    const other = buildSplice({ id: testId(300), fiberA: 5, fiberB: 5 })
    expect(assessSplice(buildSplice(), limits, context({ otherCurrentSplices: [other] })).flags).toEqual([
      'slot_reused',
    ])
  })

  it('when the other splice is this one, the attempt it replaces, or in another closure, then nothing is reused', () => {
    const self = buildSplice()
    const replaced = buildSplice({ id: testId(199) })
    const elsewhere = buildSplice({ id: testId(301), closureId: ids.otherClosure })
    const resplice = buildSplice({ attempt: 2, supersedesId: testId(199), respliceReason: 'bubble' })
    const result = assessSplice(
      resplice,
      limits,
      context({ otherCurrentSplices: [self, replaced, elsewhere] }),
    )
    expect(result.flags).toEqual(['resplice'])
    expect(result.needsReview).toBe(true)
  })

  it('when the closure is signed off, then the splice is flagged', () => {
    expect(assessSplice(buildSplice(), limits, context({ closureState: 'signed_off' })).flags).toEqual([
      'closure_signed_off',
    ])
    expect(assessSplice(buildSplice(), limits, context({ closureState: 'reopened' })).flags).toEqual([])
  })
})

describe('current attempts', () => {
  it('when a splice is superseded by another, then only the later one is current', () => {
    const first = buildSplice({ id: testId(1000) })
    const second = buildSplice({
      id: testId(1001),
      attempt: 2,
      supersedesId: first.id,
      respliceReason: 'bad_cleave',
    })
    const third = buildSplice({
      id: testId(1002),
      attempt: 3,
      supersedesId: second.id,
      respliceReason: 'bubble',
    })
    const other = buildSplice({ id: testId(1003), slot: 2, fiberA: 2, fiberB: 2 })
    expect(currentAttempts([third, first, other, second]).map((s) => s.id)).toEqual([third.id, other.id])
  })
})

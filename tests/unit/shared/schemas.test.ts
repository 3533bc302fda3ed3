import { describe, expect, it } from 'vitest'
import {
  cableCreateSchema,
  cableSchema,
  cableUpdateSchema,
  closureCreateSchema,
  closureReopenSchema,
  closureSchema,
  closureUpdateSchema,
  crewSchema,
  errorBodySchema,
  pageQuerySchema,
  pageSchema,
  planRowCreateSchema,
  planRowDraftSchema,
  projectCreateSchema,
  projectLimitsSchema,
  projectSchema,
  projectUpdateSchema,
  signInSchema,
  spliceCreateSchema,
  spliceSchema,
  spliceUpdateSchema,
  trayCreateSchema,
  userCreateSchema,
  userSchema,
  userUpdateSchema,
} from '#shared/schemas/index'
import { defaultPhotoRules, defaultProjectLimits } from '#shared/schemas/project'
import { buildCable, buildPlanRow, buildSplice, buildTray, ids, testId, without } from './builders'

const messages = (result: {
  success: boolean
  error?: { issues: Array<{ message: string; path: PropertyKey[] }> }
}) => result.error?.issues.map((issue) => `${issue.path.join('.')}: ${issue.message}`) ?? []

describe('project', () => {
  const project = {
    id: ids.project,
    code: 'BRK-01',
    name: 'Brookfield ring, phase 1',
    otdrToleranceM: 15,
    disagreementDb: 0.05,
  }

  it('when a project is created with only its own figures, then limits, photo rules and method take the defaults', () => {
    const parsed = projectCreateSchema.parse(project)
    expect(parsed.limits).toEqual(defaultProjectLimits)
    expect(parsed.limits).not.toBe(defaultProjectLimits)
    expect(parsed.photoRules).toEqual(defaultPhotoRules)
    expect(parsed.defaultMethod).toBe('single_fusion')
    expect(projectSchema.safeParse(parsed).success).toBe(true)
  })

  it('when a create body has an unknown key or a lower-case code, then it is refused', () => {
    expect(messages(projectCreateSchema.safeParse({ ...project, colour: 'red' }))).toEqual([
      ': Unrecognized key: "colour"',
    ])
    expect(projectCreateSchema.safeParse({ ...project, code: 'brk 01' }).success).toBe(false)
  })

  it('when limits put the target above the maximum or repeat a wavelength, then they are refused', () => {
    const limits = structuredClone(defaultProjectLimits)
    limits.estimate.contractTargetDb = 0.5
    expect(messages(projectLimitsSchema.safeParse(limits))).toEqual([
      'estimate.contractTargetDb: The contract target cannot be looser than the standard maximum.',
    ])
    const repeated = structuredClone(defaultProjectLimits)
    repeated.perWavelength.push({ wavelength: 1550, standardMaxDb: 0.3, contractTargetDb: 0.08 })
    expect(messages(projectLimitsSchema.safeParse(repeated))).toEqual([
      'perWavelength.2.wavelength: 1550 nm is listed twice.',
    ])
    expect(
      projectLimitsSchema.safeParse({ ...defaultProjectLimits, attemptsBeforeAcceptWithFlag: 0 }).success,
    ).toBe(false)
  })

  it('when an update changes nothing, then it is refused', () => {
    expect(projectUpdateSchema.safeParse({}).success).toBe(false)
    expect(projectUpdateSchema.parse({ name: 'Renamed' })).toEqual({ name: 'Renamed' })
  })
})

describe('cable', () => {
  it('when a cable is created without layout extras, then they default to none and TIA-598', () => {
    const body = without(buildCable(), 'unitCounts', 'ribbonsPerTube', 'colourScheme')
    expect(cableCreateSchema.parse(body)).toEqual(buildCable())
  })

  it('when the fiber count does not fit the tubes, then the message says exactly what is wrong', () => {
    expect(messages(cableSchema.safeParse(buildCable({ fiberCount: 100 })))).toEqual([
      'fiberCount: 100 fibers do not fill tubes of 12 evenly (8 × 12 = 96, 4 left over); give per-tube counts if the tubes differ.',
    ])
    expect(
      messages(cableCreateSchema.safeParse(buildCable({ fiberCount: 30, unitCounts: [12, 12] }))),
    ).toEqual(["unitCounts: The per-tube counts add up to 24 fibers, not the cable's 30."])
  })

  it('when a ribbon cable groups ribbons in tubes, then 864 = 12 × 6 × 12 is accepted', () => {
    const ribbon = buildCable({
      fiberCount: 864,
      construction: 'ribbon',
      fibersPerUnit: 12,
      ribbonsPerTube: 6,
    })
    expect(cableSchema.safeParse(ribbon).success).toBe(true)
  })

  it('when counts are out of range, then they are refused', () => {
    expect(cableSchema.safeParse(buildCable({ fiberCount: 3457, fibersPerUnit: 1 })).success).toBe(false)
    expect(cableSchema.safeParse(buildCable({ fibersPerUnit: 25 })).success).toBe(false)
    expect(cableSchema.safeParse(buildCable({ lengthM: 0 })).success).toBe(false)
  })

  it('when a cable update leaves fields out, then no default is slipped in', () => {
    expect(cableUpdateSchema.parse({ label: 'Feeder F-144 (spare)' })).toEqual({
      label: 'Feeder F-144 (spare)',
    })
    expect(cableUpdateSchema.safeParse({ projectId: ids.project }).success).toBe(false)
  })
})

describe('closure and tray', () => {
  const closure = { id: ids.closure, projectId: ids.project, label: 'HH-07 Mill Lane', kind: 'handhole' }

  it('when a closure is created, then its position fields default to none and it is not at the roadside', () => {
    expect(closureCreateSchema.parse(closure)).toEqual({
      ...closure,
      lat: null,
      lon: null,
      routePositionM: null,
      roadside: false,
      crewId: null,
    })
    expect(closureCreateSchema.safeParse({ ...closure, state: 'signed_off' }).success).toBe(false)
  })

  it('when only one of latitude and longitude is given, then it is refused', () => {
    expect(messages(closureCreateSchema.safeParse({ ...closure, lat: 51.5 }))).toEqual([
      'lon: Give both latitude and longitude, or neither.',
    ])
    expect(
      closureSchema.safeParse({ ...closureCreateSchema.parse(closure), lat: 91, lon: 0, state: 'planned' })
        .success,
    ).toBe(false)
  })

  it('when a closure update or reopen is sent, then it is checked', () => {
    expect(closureUpdateSchema.parse({ roadside: true })).toEqual({ roadside: true })
    expect(closureUpdateSchema.safeParse({ state: 'signed_off' }).success).toBe(false)
    expect(closureReopenSchema.safeParse({ reason: ' ' }).success).toBe(false)
  })

  it('when a tray is outside 1..144 slots, then it is refused', () => {
    expect(trayCreateSchema.safeParse(buildTray()).success).toBe(true)
    expect(trayCreateSchema.safeParse(buildTray({ capacity: 145 })).success).toBe(false)
    expect(trayCreateSchema.safeParse(buildTray({ number: 0 })).success).toBe(false)
  })
})

describe('plan row and splice', () => {
  it('when a plan row joins a fiber to itself, then it is refused', () => {
    expect(planRowCreateSchema.safeParse(buildPlanRow()).success).toBe(true)
    expect(planRowCreateSchema.safeParse(buildPlanRow({ cableBId: ids.cableA })).success).toBe(false)
    const draft = without(buildPlanRow(), 'id', 'closureId')
    expect(planRowDraftSchema.safeParse(draft).success).toBe(true)
  })

  it('when a splice is created with only what the splicer entered, then the rest takes its defaults', () => {
    const full = buildSplice({ lossDb: 0.03 })
    const entered = without(
      full,
      'attempt',
      'respliceReason',
      'respliceNote',
      'supersedesId',
      'acceptReason',
      'notes',
    )
    expect(spliceCreateSchema.parse(entered)).toEqual(full)
    expect(spliceSchema.safeParse(full).success).toBe(true)
  })

  it('when a loss has more than three decimals or is out of range, then it is refused', () => {
    expect(spliceSchema.safeParse(buildSplice({ lossDb: 0.0125 })).success).toBe(false)
    expect(spliceSchema.safeParse(buildSplice({ lossDb: -0.243 })).success).toBe(true)
    expect(spliceSchema.safeParse(buildSplice({ lossDb: 10.001 })).success).toBe(false)
    expect(spliceSchema.safeParse(buildSplice({ lossDb: -1.001 })).success).toBe(false)
  })

  it('when a re-splice names no reason, is attempt 1, or replaces itself, then each is said', () => {
    const bad = buildSplice({ id: testId(7), supersedesId: testId(7), attempt: 1 })
    expect(messages(spliceSchema.safeParse(bad))).toEqual([
      'supersedesId: A splice cannot replace itself.',
      'attempt: A re-splice is attempt 2 or later.',
      'respliceReason: Say why the splice was made again.',
    ])
  })

  it('when the splice time has no offset or the ids are not UUIDs, then it is refused', () => {
    expect(spliceSchema.safeParse(buildSplice({ splicedAt: '2025-03-14 09:30' })).success).toBe(false)
    expect(spliceSchema.safeParse(buildSplice({ splicedAt: '2025-03-14T14:30:00Z' })).success).toBe(true)
    expect(spliceSchema.safeParse(buildSplice({ clientId: 'device-1' })).success).toBe(false)
  })

  it('when a splice update touches who, when or what it replaces, then it is refused', () => {
    expect(spliceUpdateSchema.parse({ lossDb: 0.04, notes: 'protector re-seated' })).toEqual({
      lossDb: 0.04,
      notes: 'protector re-seated',
    })
    expect(spliceUpdateSchema.safeParse({ splicerId: ids.otherSplicer }).success).toBe(false)
    expect(spliceUpdateSchema.safeParse({ supersedesId: testId(9) }).success).toBe(false)
    expect(spliceUpdateSchema.safeParse({}).success).toBe(false)
  })
})

describe('user, crew and sign-in', () => {
  const user = {
    id: testId(50),
    email: '  Dana.Reyes@Example.test ',
    name: 'Dana Reyes',
    role: 'splicer' as const,
  }

  it('when a user is created, then the address is normalised and the account active with no crew', () => {
    const parsed = userCreateSchema.parse({ ...user, password: 'correct horse battery' })
    expect(parsed).toMatchObject({ email: 'dana.reyes@example.test', crewId: null, active: true })
    const stored = without(parsed, 'password')
    expect(userSchema.parse(stored)).toEqual(stored)
  })

  it('when a password is short or the role unknown, then the user is refused', () => {
    expect(userCreateSchema.safeParse({ ...user, password: 'short' }).success).toBe(false)
    expect(
      userCreateSchema.safeParse({ ...user, role: 'admin', password: 'correct horse battery' }).success,
    ).toBe(false)
    expect(userUpdateSchema.parse({ active: false })).toEqual({ active: false })
  })

  it('when signing in, then only email and password are taken', () => {
    expect(signInSchema.parse({ email: 'A@B.TEST', password: 'x' })).toEqual({
      email: 'a@b.test',
      password: 'x',
    })
    expect(signInSchema.safeParse({ email: 'a@b.test', password: 'x', role: 'office' }).success).toBe(false)
    expect(crewSchema.safeParse({ id: testId(60), name: 'Crew North' }).success).toBe(true)
  })
})

describe('common bodies', () => {
  it('when an error is answered, then it has the one error shape', () => {
    expect(
      errorBodySchema.safeParse({ error: { code: 'closure_locked', message: 'Signed off.' } }).success,
    ).toBe(true)
    expect(
      errorBodySchema.safeParse({ error: { code: 'x', message: 'y', details: [{ path: 'a' }] } }).success,
    ).toBe(true)
    expect(errorBodySchema.safeParse({ message: 'no' }).success).toBe(false)
  })

  it('when a page is parsed, then items are checked with the item schema', () => {
    const page = pageSchema(crewSchema)
    expect(
      page.safeParse({ items: [{ id: testId(60), name: 'Crew North' }], total: 1, limit: 50, offset: 0 })
        .success,
    ).toBe(true)
    expect(
      page.safeParse({ items: [{ id: 'x', name: 'Crew North' }], total: 1, limit: 50, offset: 0 }).success,
    ).toBe(false)
    expect(pageQuerySchema.parse({ limit: '20' })).toEqual({ limit: 20, offset: 0 })
    expect(pageQuerySchema.safeParse({ limit: '0' }).success).toBe(false)
  })
})

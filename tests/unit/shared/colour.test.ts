import fc from 'fast-check'
import { describe, expect, it } from 'vitest'
import {
  cableLayoutProblems,
  cableTubes,
  colourKeys,
  colourName,
  colours,
  colourSchemeByName,
  FiberAddressError,
  fiberIdentity,
  fiberNumber,
  positionMarking,
  type CableLayout,
  type ColourKey,
} from '#shared/domain/colour'

const looseTube = (fibersPerUnit: number, fiberCount: number): CableLayout => ({
  fiberCount,
  construction: 'loose_tube',
  fibersPerUnit,
})

function expectAddressError(run: () => unknown, code: FiberAddressError['code']): void {
  try {
    run()
  } catch (error) {
    expect(error).toBeInstanceOf(FiberAddressError)
    expect((error as FiberAddressError).code).toBe(code)
    expect((error as FiberAddressError).message.length).toBeGreaterThan(10)
    return
  }
  throw new Error(`expected a FiberAddressError '${code}'`)
}

describe('TIA-598 colour sequence', () => {
  it('when positions 1–12 are read, then they follow TIA-598-C (Blue … Aqua)', () => {
    // Source: TIA-598-C, Optical Fiber Cable Color Coding, as summarised in its public encyclopedia entry.
    const names = Array.from({ length: 12 }, (_, i) => colourName(positionMarking(i + 1)))
    expect(names).toEqual([
      'Blue',
      'Orange',
      'Green',
      'Brown',
      'Slate',
      'White',
      'Red',
      'Black',
      'Yellow',
      'Violet',
      'Rose',
      'Aqua',
    ])
    expect(colourSchemeByName.tia598.sequence).toEqual(colourKeys)
  })

  it('when a swatch is shown, then every colour has a distinct hex and a readable ink colour', () => {
    const hexes = colourKeys.map((key) => colours[key].hex)
    expect(new Set(hexes).size).toBe(12)
    for (const key of colourKeys) {
      expect(colours[key].hex).toMatch(/^#[0-9a-f]{6}$/)
      expect(['#000000', '#ffffff']).toContain(colours[key].ink)
    }
  })

  it('when positions 13–24 are read, then they repeat with a black tracer (TIA-598-C summary)', () => {
    expect(positionMarking(13)).toEqual({ base: 'blue', tracer: 'black', tracerCount: 1, style: 'stripe' })
    expect(positionMarking(24)).toEqual({ base: 'aqua', tracer: 'black', tracerCount: 1, style: 'stripe' })
    expect(colourName(positionMarking(13))).toBe('Blue/Black')
  })

  it('when position 20 (black) is read, then it carries a yellow tracer (TIA-598-C summary)', () => {
    expect(positionMarking(20)).toEqual({ base: 'black', tracer: 'yellow', tracerCount: 1, style: 'stripe' })
    expect(colourName(positionMarking(20))).toBe('Black/Yellow')
  })

  it('when positions 25–36 are read, then they carry a double tracer (summary, not the standard table)', () => {
    expect(positionMarking(25)).toEqual({ base: 'blue', tracer: 'black', tracerCount: 2, style: 'stripe' })
    expect(positionMarking(32)).toEqual({ base: 'black', tracer: 'yellow', tracerCount: 2, style: 'stripe' })
    expect(colourName(positionMarking(25))).toBe('Blue/Black×2')
    expect(colourName(positionMarking(25), 'abbreviation')).toBe('BL/BK×2')
    expect(positionMarking(37).tracerCount).toBe(3)
  })

  it('when positions 1–12 are read, then they are solid with no tracer', () => {
    expect(positionMarking(1)).toEqual({ base: 'blue', tracer: null, tracerCount: 0, style: 'solid' })
    expect(colourName(positionMarking(8), 'abbreviation')).toBe('BK')
  })

  it('when a position is not a whole number from 1, then it is refused', () => {
    expectAddressError(() => positionMarking(0), 'unknown_position')
    expectAddressError(() => positionMarking(2.5), 'unknown_position')
  })
})

describe('fiber identity, REFERENCE §1 worked checks (computed from the TIA-598 rule)', () => {
  const rows: Array<
    [perTube: number, n: number, tube: number, tubeColour: string, position: number, fiberColour: string]
  > = [
    [12, 1, 1, 'Blue', 1, 'Blue'],
    [12, 12, 1, 'Blue', 12, 'Aqua'],
    [12, 13, 2, 'Orange', 1, 'Blue'],
    [12, 37, 4, 'Brown', 1, 'Blue'],
    [12, 144, 12, 'Aqua', 12, 'Aqua'],
    [12, 145, 13, 'Blue/Black', 1, 'Blue'],
    [12, 288, 24, 'Aqua/Black', 12, 'Aqua'],
    [6, 7, 2, 'Orange', 1, 'Blue'],
    [6, 37, 7, 'Red', 1, 'Blue'],
    [6, 73, 13, 'Blue/Black', 1, 'Blue'],
    [24, 13, 1, 'Blue', 13, 'Blue/Black'],
    [24, 25, 2, 'Orange', 1, 'Blue'],
  ]

  it.each(rows)(
    'when a %i-per-tube cable gives fiber %i, then it is tube %i (%s) position %i (%s)',
    (perTube, n, tube, tubeColour, position, fiberColour) => {
      const cable = looseTube(perTube, 288)
      const identity = fiberIdentity(cable, n)
      expect(identity.fiber).toBe(n)
      expect(identity.tube?.number).toBe(tube)
      expect(colourName(identity.tube!.marking)).toBe(tubeColour)
      expect(identity.position).toBe(position)
      expect(colourName(identity.marking)).toBe(fiberColour)
      expect(identity.ribbon).toBeNull()
      expect(fiberNumber(cable, { tube, position })).toBe(n)
    },
  )

  it('when tube 13 of a 12-per-tube cable is shown, then its marking is Blue with a black tracer', () => {
    expect(fiberIdentity(looseTube(12, 288), 145).tube?.marking).toEqual({
      base: 'blue',
      tracer: 'black',
      tracerCount: 1,
      style: 'stripe',
    })
  })
})

describe('cable layouts', () => {
  // One manufacturer's published data sheet; 288 and 432 are common practice.
  it.each([
    [24, 6, 4],
    [36, 6, 6],
    [48, 12, 4],
    [72, 12, 6],
    [96, 12, 8],
    [144, 12, 12],
    [288, 12, 24],
    [432, 12, 36],
  ])('when a %i-fiber loose-tube cable has %i per tube, then it has %i tubes', (count, perTube, tubes) => {
    expect(cableLayoutProblems(looseTube(perTube, count))).toEqual([])
    expect(cableTubes(looseTube(perTube, count))).toHaveLength(tubes)
  })

  it('when tubes differ in size, then fibers are counted through the per-tube counts', () => {
    const cable: CableLayout = {
      fiberCount: 36,
      construction: 'loose_tube',
      fibersPerUnit: 12,
      unitCounts: [12, 6, 12, 6],
    }
    expect(fiberIdentity(cable, 12)).toMatchObject({ tube: { number: 1 }, position: 12 })
    expect(fiberIdentity(cable, 13)).toMatchObject({ tube: { number: 2 }, position: 1 })
    expect(fiberIdentity(cable, 19)).toMatchObject({ tube: { number: 3 }, position: 1 })
    expect(fiberIdentity(cable, 36)).toMatchObject({ tube: { number: 4 }, position: 6 })
    expect(colourName(fiberIdentity(cable, 36).tube!.marking)).toBe('Brown')
    expect(fiberNumber(cable, { tube: 3, position: 12 })).toBe(30)
    expectAddressError(() => fiberNumber(cable, { tube: 2, position: 7 }), 'unknown_position')
    expectAddressError(() => fiberNumber(cable, { tube: 5, position: 1 }), 'unknown_tube')
  })

  it('when a ribbon cable groups 6 ribbons in each of 12 tubes, then 864 fibers map to tube, ribbon and position (common practice)', () => {
    const cable: CableLayout = {
      fiberCount: 864,
      construction: 'ribbon',
      fibersPerUnit: 12,
      ribbonsPerTube: 6,
    }
    expect(cableLayoutProblems(cable)).toEqual([])
    expect(cableTubes(cable)).toHaveLength(12)
    const last = fiberIdentity(cable, 864)
    expect(last).toMatchObject({
      tube: { number: 12 },
      ribbon: { number: 72, positionInTube: 6 },
      position: 12,
    })
    expect(colourName(last.tube!.marking)).toBe('Aqua')
    const f85 = fiberIdentity(cable, 85)
    expect(f85).toMatchObject({ tube: { number: 2 }, ribbon: { number: 8, positionInTube: 2 }, position: 1 })
    expect(colourName(f85.marking)).toBe('Blue')
    expect(fiberNumber(cable, { ribbon: 8, position: 1 })).toBe(85)
  })

  it('when a ribbon cable has no tubes, then fibers carry a ribbon number only', () => {
    const cable: CableLayout = { fiberCount: 144, construction: 'ribbon', fibersPerUnit: 12 }
    expect(fiberIdentity(cable, 30)).toMatchObject({
      tube: null,
      ribbon: { number: 3, positionInTube: null },
      position: 6,
    })
    expect(cableTubes(cable)).toEqual([])
    expectAddressError(() => fiberNumber(cable, { tube: 1, position: 1 }), 'wrong_construction')
    expectAddressError(() => fiberNumber(cable, { ribbon: 13, position: 1 }), 'unknown_ribbon')
    expectAddressError(() => fiberNumber(cable, { ribbon: 1, position: 13 }), 'unknown_position')
    expectAddressError(
      () => fiberNumber(looseTube(12, 144), { ribbon: 1, position: 1 }),
      'wrong_construction',
    )
  })

  it('when a layout does not add up, then the problem names the field and what is wrong', () => {
    expect(cableLayoutProblems(looseTube(12, 100))).toEqual([
      {
        path: ['fiberCount'],
        message:
          '100 fibers do not fill tubes of 12 evenly (8 × 12 = 96, 4 left over); give per-tube counts if the tubes differ.',
      },
    ])
    expect(
      cableLayoutProblems({
        fiberCount: 40,
        construction: 'loose_tube',
        fibersPerUnit: 12,
        unitCounts: [12, 12, 12],
      }),
    ).toEqual([
      { path: ['unitCounts'], message: "The per-tube counts add up to 36 fibers, not the cable's 40." },
    ])
    expect(
      cableLayoutProblems({
        fiberCount: 26,
        construction: 'loose_tube',
        fibersPerUnit: 12,
        unitCounts: [12, 14],
      })[0],
    ).toMatchObject({ path: ['unitCounts', 1] })
    expect(
      cableLayoutProblems({
        fiberCount: 72,
        construction: 'ribbon',
        fibersPerUnit: 12,
        ribbonsPerTube: 4,
      })[0],
    ).toMatchObject({ path: ['ribbonsPerTube'], message: '6 ribbons do not fill tubes of 4 ribbons evenly.' })
    expect(
      cableLayoutProblems({
        fiberCount: 24,
        construction: 'loose_tube',
        fibersPerUnit: 12,
        ribbonsPerTube: 2,
      })[0],
    ).toMatchObject({ path: ['ribbonsPerTube'] })
    expect(
      cableLayoutProblems({
        fiberCount: 24,
        construction: 'ribbon',
        fibersPerUnit: 12,
        unitCounts: [12, 12],
      })[0],
    ).toMatchObject({ path: ['unitCounts'] })
    expectAddressError(() => fiberIdentity(looseTube(12, 100), 1), 'bad_layout')
  })
})

describe('fiber numbering properties', () => {
  const uniformLoose = fc
    .record({ perUnit: fc.integer({ min: 1, max: 24 }), tubes: fc.integer({ min: 1, max: 144 }) })
    .filter(({ perUnit, tubes }) => perUnit * tubes <= 3456)
    .map(({ perUnit, tubes }): CableLayout => looseTube(perUnit, perUnit * tubes))
  const mixedLoose = fc
    .array(fc.integer({ min: 1, max: 24 }), { minLength: 1, maxLength: 48 })
    .map((counts): CableLayout => ({
      fiberCount: counts.reduce((a, b) => a + b, 0),
      construction: 'loose_tube',
      fibersPerUnit: Math.max(...counts),
      unitCounts: counts,
    }))
  const ribbon = fc
    .record({
      perUnit: fc.integer({ min: 1, max: 24 }),
      perTube: fc.option(fc.integer({ min: 1, max: 12 }), { nil: null }),
      tubes: fc.integer({ min: 1, max: 24 }),
    })
    .filter(({ perUnit, perTube, tubes }) => perUnit * (perTube ?? 1) * tubes <= 3456)
    .map(({ perUnit, perTube, tubes }): CableLayout => ({
      fiberCount: perUnit * (perTube ?? 1) * tubes,
      construction: 'ribbon',
      fibersPerUnit: perUnit,
      ribbonsPerTube: perTube,
    }))
  const layouts = fc.oneof(uniformLoose, mixedLoose, ribbon)

  it('when any fiber of any layout is identified, then its address gives the same fiber number back', () => {
    fc.assert(
      fc.property(
        layouts.chain((cable) => fc.tuple(fc.constant(cable), fc.integer({ min: 1, max: cable.fiberCount }))),
        ([cable, n]) => {
          const identity = fiberIdentity(cable, n)
          const address =
            identity.ribbon === null
              ? { tube: identity.tube!.number, position: identity.position }
              : { ribbon: identity.ribbon.number, position: identity.position }
          expect(fiberNumber(cable, address)).toBe(n)
          expect(identity.position).toBeGreaterThanOrEqual(1)
          expect(identity.position).toBeLessThanOrEqual(cable.fibersPerUnit)
        },
      ),
      { numRuns: 300 },
    )
  })

  it('when a fiber number is outside the cable or not whole, then the typed error says which', () => {
    const outside = fc.oneof(
      fc.integer({ min: -10_000, max: 0 }).map((n) => ({ n, code: 'below_one' as const })),
      fc
        .integer({ min: 1, max: 10_000 })
        .map((extra) => ({ n: extra, code: 'beyond_fiber_count' as const, extra })),
      fc
        .double({ min: -5000, max: 5000, noNaN: true })
        .filter((n) => !Number.isInteger(n))
        .map((n) => ({ n, code: 'not_integer' as const })),
      fc.constantFrom(Number.NaN, Infinity).map((n) => ({ n, code: 'not_integer' as const })),
    )
    fc.assert(
      fc.property(layouts, outside, (cable, input) => {
        const n = input.code === 'beyond_fiber_count' ? cable.fiberCount + input.n : input.n
        expectAddressError(() => fiberIdentity(cable, n), input.code)
      }),
      { numRuns: 300 },
    )
  })

  it('when a marking is named, then the base colour comes first and the tracer only on repeats', () => {
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 288 }), (p) => {
        const marking = positionMarking(p)
        expect(marking.base).toBe(colourKeys[(p - 1) % 12] as ColourKey)
        expect(marking.tracerCount).toBe(Math.floor((p - 1) / 12))
        expect(colourName(marking).startsWith(colours[marking.base].name)).toBe(true)
      }),
    )
  })
})

import type { CableConstruction, ColourSchemeName } from '../schemas/enums'

export const colourKeys = [
  'blue',
  'orange',
  'green',
  'brown',
  'slate',
  'white',
  'red',
  'black',
  'yellow',
  'violet',
  'rose',
  'aqua',
] as const
export type ColourKey = (typeof colourKeys)[number]

/** A colour as shown on screen: `hex` fills the swatch, `ink` is a readable text colour on it. */
export type Colour = { key: ColourKey; name: string; abbreviation: string; hex: string; ink: string }

// Swatch values are for display only; they are chosen to stay distinguishable on a dim phone screen.
export const colours: Readonly<Record<ColourKey, Colour>> = {
  blue: { key: 'blue', name: 'Blue', abbreviation: 'BL', hex: '#1f5fd6', ink: '#ffffff' },
  orange: { key: 'orange', name: 'Orange', abbreviation: 'OR', hex: '#f28a1a', ink: '#000000' },
  green: { key: 'green', name: 'Green', abbreviation: 'GR', hex: '#2e9b47', ink: '#ffffff' },
  brown: { key: 'brown', name: 'Brown', abbreviation: 'BR', hex: '#8b5a2b', ink: '#ffffff' },
  slate: { key: 'slate', name: 'Slate', abbreviation: 'SL', hex: '#708090', ink: '#ffffff' },
  white: { key: 'white', name: 'White', abbreviation: 'WH', hex: '#f5f5f2', ink: '#000000' },
  red: { key: 'red', name: 'Red', abbreviation: 'RD', hex: '#d3232e', ink: '#ffffff' },
  black: { key: 'black', name: 'Black', abbreviation: 'BK', hex: '#161616', ink: '#ffffff' },
  yellow: { key: 'yellow', name: 'Yellow', abbreviation: 'YL', hex: '#f5d320', ink: '#000000' },
  violet: { key: 'violet', name: 'Violet', abbreviation: 'VI', hex: '#8a4fbf', ink: '#ffffff' },
  rose: { key: 'rose', name: 'Rose', abbreviation: 'RS', hex: '#f2a7bb', ink: '#000000' },
  aqua: { key: 'aqua', name: 'Aqua', abbreviation: 'AQ', hex: '#36c5d0', ink: '#000000' },
}

/** A colour sequence: twelve base colours, the tracer added on repeats, and the tracer used when the base is that tracer colour. */
export type ColourScheme = {
  name: ColourSchemeName
  label: string
  sequence: readonly ColourKey[]
  tracer: ColourKey
  tracerOnTracer: ColourKey
}

export const colourSchemeByName: Readonly<Record<ColourSchemeName, ColourScheme>> = {
  // TIA-598-C, Optical Fiber Cable Color Coding (as summarised in its public encyclopedia entry).
  tia598: {
    name: 'tia598',
    label: 'TIA-598',
    sequence: colourKeys,
    tracer: 'black',
    tracerOnTracer: 'yellow',
  },
}

export const defaultColourScheme: ColourSchemeName = 'tia598'

/** How a tube or fiber at a position is marked: a base colour, and for repeats a tracer stripe or dash. */
export type Marking = {
  base: ColourKey
  tracer: ColourKey | null
  tracerCount: number
  style: 'solid' | 'stripe'
}

export type FiberAddressErrorCode =
  | 'not_integer'
  | 'below_one'
  | 'beyond_fiber_count'
  | 'unknown_tube'
  | 'unknown_ribbon'
  | 'unknown_position'
  | 'wrong_construction'
  | 'bad_layout'

/** Raised when a fiber, tube, ribbon or position cannot exist in the cable named. */
export class FiberAddressError extends Error {
  override readonly name = 'FiberAddressError'
  readonly code: FiberAddressErrorCode

  constructor(code: FiberAddressErrorCode, message: string) {
    super(message)
    this.code = code
  }
}

/** Gives the marking of position `position` (1-based) of a colour sequence. */
export function positionMarking(position: number, scheme: ColourSchemeName = defaultColourScheme): Marking {
  if (!Number.isInteger(position) || position < 1) {
    throw new FiberAddressError('unknown_position', `Position ${position} is not a whole number from 1.`)
  }
  const { sequence, tracer, tracerOnTracer } = colourSchemeByName[scheme]
  const base = sequence[(position - 1) % sequence.length] as ColourKey
  // Positions 13–24 carry one tracer; "one more tracer per further group of 12" comes from the
  // public summary of TIA-598, not from the standard's own table, so it is data here, not a rule.
  const tracerCount = Math.floor((position - 1) / sequence.length)
  if (tracerCount === 0) return { base, tracer: null, tracerCount: 0, style: 'solid' }
  return { base, tracer: base === tracer ? tracerOnTracer : tracer, tracerCount, style: 'stripe' }
}

/** Names a marking for people: 'Blue', 'Blue/Black', 'Blue/Black×2', or 'BL/BK' in abbreviated form. */
export function colourName(marking: Marking, form: 'name' | 'abbreviation' = 'name'): string {
  const word = (key: ColourKey) => (form === 'name' ? colours[key].name : colours[key].abbreviation)
  if (marking.tracer === null || marking.tracerCount === 0) return word(marking.base)
  const times = marking.tracerCount > 1 ? `×${marking.tracerCount}` : ''
  return `${word(marking.base)}/${word(marking.tracer)}${times}`
}

/** The parts of a cable that decide how its fibers are numbered and coloured. */
export type CableLayout = {
  fiberCount: number
  construction: CableConstruction
  fibersPerUnit: number
  unitCounts?: readonly number[] | null
  ribbonsPerTube?: number | null
  colourScheme?: ColourSchemeName
}

export type LayoutProblem = { path: Array<string | number>; message: string }

/** Lists what makes a cable layout impossible, each with the field it concerns; empty when the layout holds together. */
export function cableLayoutProblems(layout: CableLayout): LayoutProblem[] {
  const problems: LayoutProblem[] = []
  const { fiberCount, fibersPerUnit: perUnit } = layout
  const unitCounts = layout.unitCounts ?? null
  const ribbonsPerTube = layout.ribbonsPerTube ?? null
  if (!Number.isInteger(fiberCount) || fiberCount < 1) {
    problems.push({ path: ['fiberCount'], message: 'The fiber count must be a whole number from 1.' })
  }
  if (!Number.isInteger(perUnit) || perUnit < 1) {
    problems.push({
      path: ['fibersPerUnit'],
      message: 'Fibers per tube or ribbon must be a whole number from 1.',
    })
  }
  if (problems.length > 0) return problems

  if (layout.construction === 'loose_tube') {
    if (ribbonsPerTube !== null) {
      problems.push({
        path: ['ribbonsPerTube'],
        message:
          'Only ribbon cables group ribbons in tubes; leave ribbons per tube empty for a loose-tube cable.',
      })
    }
    if (unitCounts === null) {
      if (fiberCount % perUnit !== 0) {
        const tubes = Math.floor(fiberCount / perUnit)
        problems.push({
          path: ['fiberCount'],
          message:
            `${fiberCount} fibers do not fill tubes of ${perUnit} evenly (${tubes} × ${perUnit} = ` +
            `${tubes * perUnit}, ${fiberCount - tubes * perUnit} left over); give per-tube counts if the tubes differ.`,
        })
      }
      return problems
    }
    if (unitCounts.length === 0) {
      problems.push({
        path: ['unitCounts'],
        message: 'Give one count per tube, or none when all tubes are alike.',
      })
      return problems
    }
    unitCounts.forEach((count, i) => {
      if (!Number.isInteger(count) || count < 1 || count > perUnit) {
        problems.push({
          path: ['unitCounts', i],
          message: `Tube ${i + 1} is given ${count} fibers; each tube holds 1 to ${perUnit} (fibers per tube).`,
        })
      }
    })
    const sum = unitCounts.reduce((total, count) => total + count, 0)
    if (sum !== fiberCount) {
      problems.push({
        path: ['unitCounts'],
        message: `The per-tube counts add up to ${sum} fibers, not the cable's ${fiberCount}.`,
      })
    }
    return problems
  }

  if (unitCounts !== null) {
    problems.push({
      path: ['unitCounts'],
      message: 'Per-tube counts are for loose-tube cables; a ribbon cable gives ribbons per tube instead.',
    })
  }
  if (fiberCount % perUnit !== 0) {
    problems.push({
      path: ['fiberCount'],
      message: `${fiberCount} fibers do not make whole ribbons of ${perUnit}.`,
    })
    return problems
  }
  if (ribbonsPerTube !== null) {
    const ribbons = fiberCount / perUnit
    if (!Number.isInteger(ribbonsPerTube) || ribbonsPerTube < 1) {
      problems.push({ path: ['ribbonsPerTube'], message: 'Ribbons per tube must be a whole number from 1.' })
    } else if (ribbons % ribbonsPerTube !== 0) {
      problems.push({
        path: ['ribbonsPerTube'],
        message: `${ribbons} ribbons do not fill tubes of ${ribbonsPerTube} ribbons evenly.`,
      })
    }
  }
  return problems
}

/** One buffer tube of a cable: its number, marking, first fiber and how many fibers it holds. */
export type TubeInfo = { number: number; marking: Marking; firstFiber: number; fiberCount: number }

/** The identity of one fiber: its tube (if any), its ribbon (ribbon cables), its position and marking. */
export type FiberIdentity = {
  fiber: number
  tube: { number: number; marking: Marking } | null
  ribbon: { number: number; positionInTube: number | null } | null
  position: number
  marking: Marking
}

export type FiberAddress = { tube: number; position: number } | { ribbon: number; position: number }

function assertLayout(cable: CableLayout): void {
  const problem = cableLayoutProblems(cable)[0]
  if (problem) throw new FiberAddressError('bad_layout', problem.message)
}

function schemeOf(cable: CableLayout): ColourSchemeName {
  return cable.colourScheme ?? defaultColourScheme
}

/** Lists a cable's buffer tubes in order; a ribbon cable without tubes has none. */
export function cableTubes(cable: CableLayout): TubeInfo[] {
  assertLayout(cable)
  const scheme = schemeOf(cable)
  let sizes: readonly number[]
  if (cable.construction === 'loose_tube') {
    sizes =
      cable.unitCounts ??
      Array.from({ length: cable.fiberCount / cable.fibersPerUnit }, () => cable.fibersPerUnit)
  } else if (cable.ribbonsPerTube) {
    const perTube = cable.ribbonsPerTube * cable.fibersPerUnit
    sizes = Array.from({ length: cable.fiberCount / perTube }, () => perTube)
  } else {
    return []
  }
  const tubes: TubeInfo[] = []
  let firstFiber = 1
  sizes.forEach((size, i) => {
    tubes.push({ number: i + 1, marking: positionMarking(i + 1, scheme), firstFiber, fiberCount: size })
    firstFiber += size
  })
  return tubes
}

function assertFiber(cable: CableLayout, n: number): void {
  if (!Number.isInteger(n)) throw new FiberAddressError('not_integer', `Fiber ${n} is not a whole number.`)
  if (n < 1)
    throw new FiberAddressError('below_one', `Fiber ${n} does not exist: fibers are numbered from 1.`)
  if (n > cable.fiberCount) {
    throw new FiberAddressError(
      'beyond_fiber_count',
      `Fiber ${n} is beyond this cable's ${cable.fiberCount} fibers.`,
    )
  }
}

/** Identifies fiber `n` (1-based) of a cable by tube, ribbon, position and colour marking. */
export function fiberIdentity(cable: CableLayout, n: number): FiberIdentity {
  assertLayout(cable)
  assertFiber(cable, n)
  const scheme = schemeOf(cable)
  const perUnit = cable.fibersPerUnit

  if (cable.construction === 'ribbon') {
    const ribbon = Math.floor((n - 1) / perUnit) + 1
    const position = ((n - 1) % perUnit) + 1
    const perTube = cable.ribbonsPerTube ?? null
    const tubeNumber = perTube === null ? null : Math.floor((ribbon - 1) / perTube) + 1
    return {
      fiber: n,
      tube: tubeNumber === null ? null : { number: tubeNumber, marking: positionMarking(tubeNumber, scheme) },
      ribbon: { number: ribbon, positionInTube: perTube === null ? null : ((ribbon - 1) % perTube) + 1 },
      position,
      marking: positionMarking(position, scheme),
    }
  }

  let tubeNumber: number
  let position: number
  if (cable.unitCounts) {
    tubeNumber = 0
    position = n
    for (const size of cable.unitCounts) {
      tubeNumber += 1
      if (position <= size) break
      position -= size
    }
  } else {
    tubeNumber = Math.floor((n - 1) / perUnit) + 1
    position = ((n - 1) % perUnit) + 1
  }
  return {
    fiber: n,
    tube: { number: tubeNumber, marking: positionMarking(tubeNumber, scheme) },
    ribbon: null,
    position,
    marking: positionMarking(position, scheme),
  }
}

function assertWhole(value: number, code: FiberAddressErrorCode, what: string): void {
  if (!Number.isInteger(value) || value < 1) {
    throw new FiberAddressError(
      code,
      `${what} ${value} does not exist: ${what.toLowerCase()}s are numbered from 1.`,
    )
  }
}

/** Finds the fiber number at a tube and position (loose tube) or a ribbon and position (ribbon cables). */
export function fiberNumber(cable: CableLayout, address: FiberAddress): number {
  assertLayout(cable)
  assertWhole(address.position, 'unknown_position', 'Position')

  if ('ribbon' in address) {
    if (cable.construction !== 'ribbon') {
      throw new FiberAddressError(
        'wrong_construction',
        'This is a loose-tube cable: give a tube, not a ribbon.',
      )
    }
    assertWhole(address.ribbon, 'unknown_ribbon', 'Ribbon')
    const ribbons = cable.fiberCount / cable.fibersPerUnit
    if (address.ribbon > ribbons) {
      throw new FiberAddressError(
        'unknown_ribbon',
        `Ribbon ${address.ribbon} is beyond this cable's ${ribbons} ribbons.`,
      )
    }
    if (address.position > cable.fibersPerUnit) {
      throw new FiberAddressError(
        'unknown_position',
        `Position ${address.position} is beyond the ${cable.fibersPerUnit} fibers of a ribbon.`,
      )
    }
    return (address.ribbon - 1) * cable.fibersPerUnit + address.position
  }

  if (cable.construction !== 'loose_tube') {
    throw new FiberAddressError(
      'wrong_construction',
      'This is a ribbon cable: give the ribbon number and position.',
    )
  }
  assertWhole(address.tube, 'unknown_tube', 'Tube')
  const tubes = cableTubes(cable)
  const tube = tubes[address.tube - 1]
  if (!tube) {
    throw new FiberAddressError(
      'unknown_tube',
      `Tube ${address.tube} is beyond this cable's ${tubes.length} tubes.`,
    )
  }
  if (address.position > tube.fiberCount) {
    throw new FiberAddressError(
      'unknown_position',
      `Position ${address.position} is beyond the ${tube.fiberCount} fibers of tube ${tube.number}.`,
    )
  }
  return tube.firstFiber + address.position - 1
}

// Fiber paths: the splices of a project form a graph whose nodes are cable fibers. Lightseam's convention
// is that the A side of a splice (and of a plan row) is the side toward the route's origin, so a path runs
// from its A end (toward the origin) through each splice from its A side to its B side.

/** A cable as path tracing needs it; `startM` is the route position of its A end (see `cableStarts`). */
export interface PathCable {
  id: string
  label: string
  lengthM: number
  startM: number
  /** The closure the cable starts in, or null when it starts at a terminal (head end). */
  startClosureId: string | null
  /** The closure the cable ends in, or null when it ends at a terminal (a drop's far end). */
  endClosureId: string | null
}

export interface PathClosure {
  id: string
  label: string
  routePositionM: number
}

/** One join between two cable fibers at a closure: a logged splice, or a planned join not yet spliced. */
export interface PathJoin {
  id: string
  closureId: string
  a: { cableId: string; fiber: number }
  b: { cableId: string; fiber: number }
}

export interface FiberRef {
  cableId: string
  fiber: number
}

const keyOf = (ref: FiberRef) => `${ref.cableId}#${ref.fiber}`

/** Where each cable lies on the route: it starts at the nearest closure where it is a join's B side, else at the origin; it ends at the farthest closure where it is a join's A side, else at a terminal. */
export function cableStarts(
  cables: readonly { id: string; label: string; lengthM: number }[],
  closures: readonly PathClosure[],
  joins: readonly Pick<PathJoin, 'closureId' | 'a' | 'b'>[],
): Map<string, PathCable> {
  const closureById = new Map(closures.map((c) => [c.id, c]))
  const starts = new Map<string, PathClosure>()
  const ends = new Map<string, PathClosure>()
  for (const join of joins) {
    const closure = closureById.get(join.closureId)
    if (!closure) continue
    const start = starts.get(join.b.cableId)
    if (!start || closure.routePositionM < start.routePositionM) starts.set(join.b.cableId, closure)
    const end = ends.get(join.a.cableId)
    if (!end || closure.routePositionM > end.routePositionM) ends.set(join.a.cableId, closure)
  }
  return new Map(
    cables.map((cable) => {
      const start = starts.get(cable.id) ?? null
      return [
        cable.id,
        {
          ...cable,
          startM: start?.routePositionM ?? 0,
          startClosureId: start?.id ?? null,
          endClosureId: ends.get(cable.id)?.id ?? null,
        },
      ]
    }),
  )
}

export type PathEnd =
  /** The fiber leaves the plant at a terminal: a connector pair counts in the budget. */
  | { kind: 'terminal' }
  /** The fiber stops in a closure without a join there: the path is incomplete. */
  | { kind: 'dead_end'; closureId: string }
  /** The path came back to a fiber it had already passed (a join loop); tracing stopped. */
  | { kind: 'loop'; joinId: string }
  /** More than one join continues from the same fiber end; tracing stopped before the fork. */
  | { kind: 'branch'; joinIds: string[] }

export interface PathSegment {
  cableId: string
  fiber: number
  /** Where the path enters and leaves the cable, metres along it from its A end. */
  fromM: number
  toM: number
  /** Metres of path from the path's A end to where this segment begins. */
  startsAtM: number
  lengthM: number
}

export interface PathStep {
  joinId: string
  closureId: string
  /** Metres of path from its A end to the join. */
  atM: number
}

export interface FiberPath {
  segments: PathSegment[]
  joins: PathStep[]
  aEnd: PathEnd
  bEnd: PathEnd
  lengthM: number
}

/** The graph tracing walks: joins by the fiber on their A side and on their B side. */
export interface PathGraph {
  cables: Map<string, PathCable>
  closures: Map<string, PathClosure>
  byA: Map<string, PathJoin[]>
  byB: Map<string, PathJoin[]>
}

/** Indexes joins for tracing. */
export function pathGraph(
  cables: Map<string, PathCable>,
  closures: readonly PathClosure[],
  joins: readonly PathJoin[],
): PathGraph {
  const byA = new Map<string, PathJoin[]>()
  const byB = new Map<string, PathJoin[]>()
  for (const join of joins) {
    byA.set(keyOf(join.a), [...(byA.get(keyOf(join.a)) ?? []), join])
    byB.set(keyOf(join.b), [...(byB.get(keyOf(join.b)) ?? []), join])
  }
  return { cables, closures: new Map(closures.map((c) => [c.id, c])), byA, byB }
}

/** Traces the fiber through every join in both directions to its two ends, reporting loops, forks and dead ends. */
export function traceFiberPath(graph: PathGraph, start: FiberRef): FiberPath {
  const seen = new Set([keyOf(start)])
  // Upstream: follow the join feeding the fiber until none does.
  const upstream: { ref: FiberRef; join: PathJoin }[] = []
  let aEnd: PathEnd | null = null
  let ref = start
  for (;;) {
    const feeding = graph.byB.get(keyOf(ref)) ?? []
    if (feeding.length > 1) {
      aEnd = { kind: 'branch', joinIds: feeding.map((j) => j.id) }
      break
    }
    const join = feeding[0]
    if (!join) break
    if (seen.has(keyOf(join.a))) {
      aEnd = { kind: 'loop', joinId: join.id }
      break
    }
    seen.add(keyOf(join.a))
    upstream.push({ ref, join })
    ref = join.a
  }
  const first = ref
  const downstream: { join: PathJoin; ref: FiberRef }[] = []
  let bEnd: PathEnd | null = null
  ref = start
  for (;;) {
    const onward = graph.byA.get(keyOf(ref)) ?? []
    if (onward.length > 1) {
      bEnd = { kind: 'branch', joinIds: onward.map((j) => j.id) }
      break
    }
    const join = onward[0]
    if (!join) break
    if (seen.has(keyOf(join.b))) {
      bEnd = { kind: 'loop', joinId: join.id }
      break
    }
    seen.add(keyOf(join.b))
    downstream.push({ join, ref: join.b })
    ref = join.b
  }
  const last = ref

  // Fibers in order from the A end, with the join before each one.
  const fibers: FiberRef[] = [first, ...upstream.map((u) => u.ref).reverse(), ...downstream.map((d) => d.ref)]
  const joins: PathJoin[] = [...upstream.map((u) => u.join).reverse(), ...downstream.map((d) => d.join)]
  const segments: PathSegment[] = []
  const steps: PathStep[] = []
  let at = 0
  fibers.forEach((fiber, i) => {
    const cable = graph.cables.get(fiber.cableId)
    const lengthOfCable = cable?.lengthM ?? 0
    const along = (join: PathJoin | undefined, fallback: number) => {
      const closure = join ? graph.closures.get(join.closureId) : undefined
      if (!closure || !cable) return fallback
      return Math.min(lengthOfCable, Math.max(0, closure.routePositionM - cable.startM))
    }
    const fromM = i === 0 ? 0 : along(joins[i - 1], 0)
    const toM = i === fibers.length - 1 ? lengthOfCable : along(joins[i], lengthOfCable)
    const lengthM = Math.max(0, toM - fromM)
    segments.push({ cableId: fiber.cableId, fiber: fiber.fiber, fromM, toM, startsAtM: at, lengthM })
    at += lengthM
    const next = joins[i]
    if (next) steps.push({ joinId: next.id, closureId: next.closureId, atM: at })
  })
  const endOf = (fiber: FiberRef, side: 'start' | 'end'): PathEnd => {
    const cable = graph.cables.get(fiber.cableId)
    const closureId = side === 'start' ? cable?.startClosureId : cable?.endClosureId
    return closureId ? { kind: 'dead_end', closureId } : { kind: 'terminal' }
  }
  return {
    segments,
    joins: steps,
    aEnd: aEnd ?? endOf(first, 'start'),
    bEnd: bEnd ?? endOf(last, 'end'),
    lengthM: at,
  }
}

/** Where a point `atM` metres from a path's A end lies: on which cable, at which route position, between which closures. */
export function locateOnPath(
  graph: PathGraph,
  path: FiberPath,
  atM: number,
  closuresOfCable: (cableId: string) => readonly PathClosure[],
): {
  cableId: string | null
  routePositionM: number | null
  after: PathClosure | null
  before: PathClosure | null
} {
  const segment =
    path.segments.find((s) => atM >= s.startsAtM && atM <= s.startsAtM + s.lengthM) ??
    (atM < 0 ? path.segments[0] : path.segments[path.segments.length - 1])
  const cable = segment ? graph.cables.get(segment.cableId) : undefined
  if (!segment || !cable) return { cableId: null, routePositionM: null, after: null, before: null }
  const routePositionM = cable.startM + segment.fromM + (atM - segment.startsAtM)
  const sorted = [...closuresOfCable(cable.id)].sort((x, y) => x.routePositionM - y.routePositionM)
  const after = sorted.filter((c) => c.routePositionM <= routePositionM).at(-1) ?? null
  const before = sorted.find((c) => c.routePositionM > routePositionM) ?? null
  return { cableId: cable.id, routePositionM, after, before }
}

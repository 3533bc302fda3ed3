import type { Sqlite } from '#db/client'
import {
  cableStarts,
  pathGraph,
  type PathClosure,
  type PathGraph,
  type PathJoin,
} from '#shared/domain/fiberPath'

export interface SpliceFacts {
  id: string
  closureId: string
  trayNumber: number
  slot: number
  cableAId: string
  fiberA: number
  cableBId: string
  fiberB: number
  lossDb: number | null
}

/** A project's cables, closures and current splices as a path graph, with the facts the views print. */
export interface ProjectPlant {
  graph: PathGraph
  cableLabels: Map<string, string>
  cableByLabel: Map<string, { id: string; fiberCount: number; label: string }>
  splices: Map<string, SpliceFacts>
  /** Closures touching each cable (by a plan row or a splice), for "between which closures". */
  closuresOfCable: (cableId: string) => PathClosure[]
}

/** Loads everything path tracing and OTDR matching need for one project, in four reads. */
export function loadProjectPlant(sqlite: Sqlite, projectId: string): ProjectPlant {
  const cables = sqlite
    .prepare(
      'SELECT id, label, length_m AS lengthM, fiber_count AS fiberCount FROM cables WHERE project_id = ? AND deleted = 0',
    )
    .all(projectId) as { id: string; label: string; lengthM: number; fiberCount: number }[]
  const closures = sqlite
    .prepare(
      'SELECT id, label, route_position_m AS routePositionM FROM closures WHERE project_id = ? AND deleted = 0 AND route_position_m IS NOT NULL',
    )
    .all(projectId) as PathClosure[]
  const splices = sqlite
    .prepare(
      `SELECT s.id, s.closure_id AS closureId, t.number AS trayNumber, s.slot, s.cable_a_id AS cableAId, s.fiber_a AS fiberA,
              s.cable_b_id AS cableBId, s.fiber_b AS fiberB, s.loss_db AS lossDb
         FROM splices s JOIN closures c ON c.id = s.closure_id JOIN trays t ON t.id = s.tray_id
        WHERE c.project_id = ? AND s.is_current = 1 AND s.deleted = 0`,
    )
    .all(projectId) as SpliceFacts[]
  const planned = sqlite
    .prepare(
      `SELECT p.closure_id AS closureId, p.cable_a_id AS cableAId, p.cable_b_id AS cableBId
         FROM plan_rows p JOIN closures c ON c.id = p.closure_id
        WHERE c.project_id = ? AND p.deleted = 0
        GROUP BY p.closure_id, p.cable_a_id, p.cable_b_id`,
    )
    .all(projectId) as { closureId: string; cableAId: string; cableBId: string }[]
  const joins: PathJoin[] = splices.map((s) => ({
    id: s.id,
    closureId: s.closureId,
    a: { cableId: s.cableAId, fiber: s.fiberA },
    b: { cableId: s.cableBId, fiber: s.fiberB },
  }))
  // Where cables start and end is read from the plan as well as the splices, so a closure not yet worked still places them.
  const layout = [
    ...joins,
    ...planned.map((p) => ({
      closureId: p.closureId,
      a: { cableId: p.cableAId, fiber: 0 },
      b: { cableId: p.cableBId, fiber: 0 },
    })),
  ]
  const placed = cableStarts(cables, closures, layout)
  const closureById = new Map(closures.map((c) => [c.id, c]))
  const touching = new Map<string, Set<string>>()
  for (const join of layout) {
    for (const cableId of [join.a.cableId, join.b.cableId]) {
      const set = touching.get(cableId) ?? new Set<string>()
      set.add(join.closureId)
      touching.set(cableId, set)
    }
  }
  return {
    graph: pathGraph(placed, closures, joins),
    cableLabels: new Map(cables.map((c) => [c.id, c.label])),
    cableByLabel: new Map(cables.map((c) => [c.label.trim().toLowerCase(), c])),
    splices: new Map(splices.map((s) => [s.id, s])),
    closuresOfCable: (cableId) =>
      [...(touching.get(cableId) ?? [])]
        .map((id) => closureById.get(id))
        .filter((c): c is PathClosure => !!c),
  }
}

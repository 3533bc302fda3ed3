import { flagsForMeasurement, spliceMeasurement } from '#shared/domain/otdr'
import type { AppContext } from '../context'
import type { Actor } from '../middleware/auth'
import { canSeeClosure } from './access'
import { getClosure } from './closures'
import { getCable, getProject } from './projects'

interface Row {
  id: string
  closureId: string
  closureLabel: string
  crewId: string | null
  state: 'planned' | 'in_progress' | 'signed_off' | 'reopened'
  trayNumber: number
  slot: number
  cableA: string
  fiberA: number
  cableB: string
  fiberB: number
  estimateDb: number | null
}

const spliceSql = `SELECT s.id, s.closure_id AS closureId, c.label AS closureLabel, c.crew_id AS crewId, c.state,
       t.number AS trayNumber, s.slot, ka.label AS cableA, s.fiber_a AS fiberA, kb.label AS cableB, s.fiber_b AS fiberB,
       s.loss_db AS estimateDb
  FROM splices s JOIN closures c ON c.id = s.closure_id JOIN trays t ON t.id = s.tray_id
  JOIN cables ka ON ka.id = s.cable_a_id JOIN cables kb ON kb.id = s.cable_b_id
 WHERE s.is_current = 1 AND s.deleted = 0`

/** Estimate against measurement per splice, with flags and the wavelengths still untested, for the given splices. */
function view(ctx: AppContext, projectId: string, rows: Row[], unmatchedWhere: { sql: string; arg: string }) {
  const { sqlite } = ctx.database
  const project = sqlite
    .prepare('SELECT limits, disagreement_db AS d FROM projects WHERE id = ?')
    .get(projectId) as { limits: string; d: number }
  const limits = JSON.parse(project.limits) as {
    perWavelength: { wavelength: number; contractTargetDb: number; standardMaxDb: number }[]
  }
  const wavelengths = limits.perWavelength.map((l) => l.wavelength)
  const results = sqlite.prepare(
    'SELECT wavelength_nm AS wavelengthNm, ab_db AS abDb, ba_db AS baDb FROM otdr_splice_results WHERE splice_id = ? ORDER BY wavelength_nm',
  )
  const splices = rows.map((row) => {
    const measured = (
      results.all(row.id) as { wavelengthNm: number; abDb: number | null; baDb: number | null }[]
    ).map((r) => {
      const result = spliceMeasurement(r.abDb, r.baDb)
      const limit = limits.perWavelength.find((l) => l.wavelength === r.wavelengthNm)
      return {
        ...r,
        kind: result.kind,
        averageDb: result.kind === 'average' ? result.lossDb : null,
        gainer: result.kind === 'average' ? result.gainer : null,
        flags: flagsForMeasurement(result, limit, row.estimateDb, project.d),
      }
    })
    const { crewId: _crew, state: _state, ...facts } = row
    return {
      ...facts,
      measured,
      untested: wavelengths.filter((w) => !measured.some((m) => m.wavelengthNm === w)),
    }
  })
  const unmatched = sqlite
    .prepare(
      `SELECT e.id, i.file_name AS fileName, e.row, t.wavelength_nm AS wavelengthNm, t.direction, e.distance_m AS distanceM,
              e.from_a_m AS fromAM, e.loss_db AS lossDb, e.kind, e.route_position_m AS routePositionM,
              a.label AS afterClosure, b.label AS beforeClosure, k.label AS cable
         FROM otdr_events e JOIN otdr_traces t ON t.id = e.trace_id JOIN otdr_imports i ON i.id = t.import_id
         LEFT JOIN closures a ON a.id = e.after_closure_id LEFT JOIN closures b ON b.id = e.before_closure_id
         LEFT JOIN cables k ON k.id = e.on_cable_id
        WHERE e.match = 'unmatched' AND ${unmatchedWhere.sql}
        ORDER BY e.route_position_m`,
    )
    .all({ id: unmatchedWhere.arg })
  return {
    wavelengths,
    splices,
    unmatched,
    counts: {
      splices: splices.length,
      untested: splices.filter((s) => s.untested.length > 0).length,
      flagged: splices.filter((s) => s.measured.some((m) => m.flags.length > 0)).length,
    },
  }
}

/** The reconciliation of one closure's splices. */
export function closureReconciliation(ctx: AppContext, actor: Actor, closureId: unknown) {
  const closure = getClosure(ctx, actor, closureId)
  const rows = ctx.database.sqlite
    .prepare(`${spliceSql} AND s.closure_id = ? ORDER BY t.number, s.slot`)
    .all(closure.id) as Row[]
  return {
    closure: { id: closure.id, label: closure.label },
    ...view(ctx, closure.projectId, rows, {
      sql: '(e.after_closure_id = @id OR e.before_closure_id = @id)',
      arg: closure.id,
    }),
  }
}

/** The reconciliation of every splice on one cable, narrowed to the closures the actor may see. */
export function cableReconciliation(ctx: AppContext, actor: Actor, cableId: unknown) {
  const cable = getCable(ctx, actor, cableId)
  getProject(ctx, actor, cable.projectId)
  const rows = (
    ctx.database.sqlite
      .prepare(
        `${spliceSql} AND (s.cable_a_id = @id OR s.cable_b_id = @id) ORDER BY c.route_position_m, t.number, s.slot`,
      )
      .all({ id: cable.id }) as Row[]
  ).filter((row) => canSeeClosure(actor, row))
  return {
    cable: { id: cable.id, label: cable.label },
    ...view(ctx, cable.projectId, rows, { sql: 'e.on_cable_id = @id', arg: cable.id }),
  }
}

import { budgetMargin, effectiveAllowances, linkLoss } from '#shared/domain/budget'
import { traceFiberPath } from '#shared/domain/fiberPath'
import { spliceMeasurement } from '#shared/domain/otdr'
import { fiberPathQuerySchema } from '#shared/schemas/otdr'
import type { AppContext } from '../context'
import { notFound } from '../errors'
import type { Actor } from '../middleware/auth'
import { loadProjectPlant } from '../repositories/otdr'
import { readBudgetSettings } from './lossBudget'
import { getProject } from './projects'

/** One fiber traced end to end, each splice's loss (measured where known, else estimated), and its loss budget per wavelength. */
export function fiberPath(ctx: AppContext, actor: Actor, projectId: unknown, query: unknown) {
  const project = getProject(ctx, actor, projectId)
  const { cableId, fiber } = fiberPathQuerySchema.parse(query)
  const { sqlite } = ctx.database
  const plant = loadProjectPlant(sqlite, project.id)
  if (!plant.graph.cables.has(cableId)) throw notFound('The cable')
  const path = traceFiberPath(plant.graph, { cableId, fiber })
  const settings = readBudgetSettings(sqlite, project.id)
  const connectors = [path.aEnd, path.bEnd].filter((end) => end.kind === 'terminal').length
  const results = sqlite.prepare(
    'SELECT ab_db AS ab, ba_db AS ba FROM otdr_splice_results WHERE splice_id = ? AND wavelength_nm = ?',
  )
  const wavelengths = project.limits.perWavelength.map((l) => l.wavelength)
  const first = path.segments[0]
  const endToEnd = sqlite.prepare(
    `SELECT t.direction, t.end_to_end_db AS db FROM otdr_traces t JOIN otdr_imports i ON i.id = t.import_id
      WHERE t.project_id = ? AND t.path_cable_id = ? AND t.path_fiber = ? AND t.wavelength_nm = ? AND t.end_to_end_db IS NOT NULL
      ORDER BY i.imported_at DESC, t.id DESC`,
  )
  const budgets = wavelengths.map((wavelengthNm) => {
    const own = effectiveAllowances(settings, wavelengthNm)
    const allowances = {
      attenuationDbPerKm: own.attenuationDbPerKm.value,
      spliceLossDb: own.spliceLossDb.value,
      connectorPairLossDb: own.connectorPairLossDb.value,
      marginDb: own.marginDb.value,
    }
    const splices = path.joins.map((step) => {
      const r = results.get(step.joinId, wavelengthNm) as { ab: number | null; ba: number | null } | undefined
      const m = r ? spliceMeasurement(r.ab, r.ba) : null
      const estimate = plant.splices.get(step.joinId)?.lossDb ?? null
      if (m?.kind === 'average')
        return { spliceId: step.joinId, lossDb: m.lossDb, source: 'measured' as const }
      if (estimate !== null) return { spliceId: step.joinId, lossDb: estimate, source: 'estimated' as const }
      return { spliceId: step.joinId, lossDb: allowances.spliceLossDb, source: 'allowance' as const }
    })
    const lengthKm = path.lengthM / 1000
    const allowed = linkLoss({
      lengthKm,
      attenuationDbPerKm: allowances.attenuationDbPerKm,
      splices: path.joins.length,
      spliceLossDb: allowances.spliceLossDb,
      connectorPairs: connectors,
      connectorLossDb: allowances.connectorPairLossDb,
      marginDb: allowances.marginDb,
    }).totalDb
    const expectedDb =
      lengthKm * allowances.attenuationDbPerKm +
      splices.reduce((n, s) => n + s.lossDb, 0) +
      connectors * allowances.connectorPairLossDb
    const margin = budgetMargin({ budgetDb: allowed, linkLossDb: expectedDb })
    const traces = first
      ? (endToEnd.all(project.id, first.cableId, first.fiber, wavelengthNm) as {
          direction: string
          db: number
        }[])
      : []
    const ab = traces.find((t) => t.direction === 'a_to_b')?.db
    const ba = traces.find((t) => t.direction === 'b_to_a')?.db
    const measuredDb = ab !== undefined && ba !== undefined ? (ab + ba) / 2 : (ab ?? ba ?? null)
    return {
      wavelengthNm,
      allowances: own,
      splices,
      allowedDb: allowed,
      expectedDb,
      marginDb: margin,
      pass: margin >= 0,
      measuredEndToEndDb: measuredDb,
      measuredMarginDb: measuredDb === null ? null : allowed - measuredDb,
      measuredPass: measuredDb === null ? null : allowed - measuredDb >= 0,
    }
  })
  return {
    lengthM: path.lengthM,
    aEnd: path.aEnd,
    bEnd: path.bEnd,
    complete: path.aEnd.kind === 'terminal' && path.bEnd.kind === 'terminal',
    connectorPairs: connectors,
    segments: path.segments.map((s) => ({ ...s, cable: plant.cableLabels.get(s.cableId) ?? '' })),
    splices: path.joins.map((j) => ({
      ...j,
      closure: plant.graph.closures.get(j.closureId)?.label ?? '',
      estimateDb: plant.splices.get(j.joinId)?.lossDb ?? null,
    })),
    budgets,
  }
}

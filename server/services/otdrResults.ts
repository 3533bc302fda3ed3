import type BetterSqlite3 from 'better-sqlite3'
import { spliceMeasurement, flagsForMeasurement } from '#shared/domain/otdr'
import type { ProjectLimits } from '#shared/schemas/project'

/** One wavelength's reconciled OTDR result for a splice. */
export interface MeasuredLoss {
  wavelengthNm: number
  averageDb: number | null
  flags: string[]
}

interface ResultRow {
  spliceId: string
  wavelengthNm: number
  abDb: number | null
  baDb: number | null
  estimateDb: number | null
  limits: string
  disagreementDb: number
}

/**
 * Measured OTDR results per splice, one entry per wavelength, with flags judged against the project's
 * current limits: averageDb is the bidirectional average, null when only one direction was read or both
 * read a gain. Splices without results are absent from the map.
 */
export function measuredForSplices(
  sqlite: BetterSqlite3.Database,
  spliceIds: readonly string[],
): Map<string, MeasuredLoss[]> {
  const out = new Map<string, MeasuredLoss[]>()
  // Chunks stay under SQLite's bound-parameter limit.
  for (let i = 0; i < spliceIds.length; i += 500) {
    const chunk = spliceIds.slice(i, i + 500)
    const rows = sqlite
      .prepare(
        `SELECT r.splice_id AS spliceId, r.wavelength_nm AS wavelengthNm, r.ab_db AS abDb, r.ba_db AS baDb,
                s.loss_db AS estimateDb, p.limits, p.disagreement_db AS disagreementDb
           FROM otdr_splice_results r
           JOIN splices s ON s.id = r.splice_id
           JOIN closures c ON c.id = s.closure_id
           JOIN projects p ON p.id = c.project_id
          WHERE r.splice_id IN (${chunk.map(() => '?').join(',')})
          ORDER BY r.splice_id, r.wavelength_nm`,
      )
      .all(...chunk) as ResultRow[]
    for (const row of rows) {
      const limits = JSON.parse(row.limits) as ProjectLimits
      const result = spliceMeasurement(row.abDb, row.baDb)
      const limit = limits.perWavelength.find((l) => l.wavelength === row.wavelengthNm)
      const entry = {
        wavelengthNm: row.wavelengthNm,
        averageDb: result.kind === 'average' ? result.lossDb : null,
        flags: flagsForMeasurement(result, limit, row.estimateDb, row.disagreementDb),
      }
      out.set(row.spliceId, [...(out.get(row.spliceId) ?? []), entry])
    }
  }
  return out
}

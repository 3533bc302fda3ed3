import type { Sqlite } from '#db/client'

/** One wavelength's reconciled OTDR result for a splice. */
export interface MeasuredLoss {
  wavelengthNm: number
  averageDb: number | null
  flags: string[]
}

/**
 * Measured losses of the given splices, per wavelength. The OTDR tables provide these; until they are in
 * this build nothing is measured, so the answer is empty and reports label every loss as an estimate.
 */
export function measuredForSplices(
  _sqlite: Sqlite,
  _spliceIds: readonly string[],
): Map<string, MeasuredLoss[]> {
  return new Map()
}

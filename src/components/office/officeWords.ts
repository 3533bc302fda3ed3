import type { PhotoPerSpliceRule, SpliceMethod } from '#shared/schemas/enums'

/** Messages for a form: one for the whole form and one per field path ('limits.estimate.standardMaxDb', 'unitCounts.2'). */
export interface FormProblems {
  message: string | null
  fields: Record<string, string>
}

export const methodLabels: Record<SpliceMethod, string> = {
  single_fusion: 'Single-fiber fusion',
  ribbon_fusion: 'Ribbon mass fusion',
  mechanical: 'Mechanical',
}

export const photoLabels: Record<PhotoPerSpliceRule, string> = {
  none: 'Not needed',
  over_target: 'When over the contract target',
  always: 'Always',
}

/** A number input's value as the schema expects it: an empty box is null, not 0 or ''. */
export function numberOrNull(value: unknown): number | null {
  if (value === '' || value === null || value === undefined) return null
  const n = typeof value === 'number' ? value : Number(value)
  return Number.isFinite(n) ? n : null
}

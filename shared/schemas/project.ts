import { z } from 'zod'
import { emptyUpdateMessage, hasSomeField, idSchema, labelSchema, limitDbSchema } from './common'
import { photoPerSpliceRuleSchema, spliceMethodSchema, wavelengthSchema, wavelengths } from './enums'

const lossLimitFields = {
  /** The standard's maximum: above it a splice must be made again. */
  standardMaxDb: limitDbSchema,
  /** The contract's target: above it a splice is re-made, or accepted with a flag after the allowed attempts. */
  contractTargetDb: limitDbSchema,
}

function checkOrder(limit: { standardMaxDb: number; contractTargetDb: number }, ctx: z.RefinementCtx): void {
  if (limit.contractTargetDb > limit.standardMaxDb) {
    ctx.addIssue({
      code: 'custom',
      path: ['contractTargetDb'],
      message: 'The contract target cannot be looser than the standard maximum.',
    })
  }
}

export const lossLimitSchema = z.strictObject(lossLimitFields).superRefine(checkOrder)
export type LossLimit = z.infer<typeof lossLimitSchema>

export const wavelengthLimitSchema = z
  .strictObject({ wavelength: wavelengthSchema, ...lossLimitFields })
  .superRefine(checkOrder)
export type WavelengthLimit = z.infer<typeof wavelengthLimitSchema>

export const projectLimitsSchema = z.strictObject({
  /** Limits for the splicer's estimated loss. */
  estimate: lossLimitSchema,
  /** Limits for measured (OTDR bidirectional average) loss, per wavelength. */
  perWavelength: z
    .array(wavelengthLimitSchema)
    .max(wavelengths.length)
    .superRefine((rows, ctx) => {
      const seen = new Set<number>()
      rows.forEach((row, i) => {
        if (seen.has(row.wavelength)) {
          ctx.addIssue({
            code: 'custom',
            path: [i, 'wavelength'],
            message: `${row.wavelength} nm is listed twice.`,
          })
        }
        seen.add(row.wavelength)
      })
    }),
  attemptsBeforeAcceptWithFlag: z.number().int().min(1).max(20),
})
export type ProjectLimits = z.infer<typeof projectLimitsSchema>

export const defaultProjectLimits: ProjectLimits = {
  estimate: {
    standardMaxDb: 0.3, // ANSI/TIA-568.3-D (2016) splice maximum, from memory; ISO/IEC 11801 gives the same
    contractTargetDb: 0.1, // published municipal and campus specifications; common practice
  },
  perWavelength: [
    { wavelength: 1310, standardMaxDb: 0.3, contractTargetDb: 0.1 }, // as above; target: common practice
    { wavelength: 1550, standardMaxDb: 0.3, contractTargetDb: 0.1 }, // published municipal specifications
  ],
  attemptsBeforeAcceptWithFlag: 3, // published municipal and campus specifications; common practice
}

export const photoRulesSchema = z.strictObject({
  perSplice: photoPerSpliceRuleSchema,
  perTray: z.boolean(),
  closedClosure: z.boolean(),
})
export type PhotoRules = z.infer<typeof photoRulesSchema>

// Common practice: trays and the closed closure are photographed; single splices only when over target.
export const defaultPhotoRules: PhotoRules = { perSplice: 'over_target', perTray: true, closedClosure: true }

const projectFields = {
  id: idSchema,
  code: z
    .string()
    .trim()
    .regex(
      /^[A-Z0-9]+(?:-[A-Z0-9]+)*$/,
      'Use capital letters and digits, parts joined by hyphens (e.g. BRK-01).',
    )
    .min(2)
    .max(16),
  name: labelSchema,
  limits: projectLimitsSchema,
  photoRules: photoRulesSchema,
  defaultMethod: spliceMethodSchema,
  /** How far apart (m) an OTDR event and a closure's route position may be and still match. */
  otdrToleranceM: z.number().min(0).max(10_000),
  /** How far (dB) an estimated loss may differ from the measured one before it is flagged. */
  disagreementDb: limitDbSchema,
}

export const projectSchema = z.object(projectFields)
export type Project = z.infer<typeof projectSchema>

export const projectCreateSchema = z
  .object({
    ...projectFields,
    limits: projectFields.limits.default(() => structuredClone(defaultProjectLimits)),
    photoRules: projectFields.photoRules.default(() => ({ ...defaultPhotoRules })),
    defaultMethod: projectFields.defaultMethod.default('single_fusion'),
  })
  .strict()
export type ProjectCreate = z.infer<typeof projectCreateSchema>

export const projectUpdateSchema = projectSchema
  .omit({ id: true })
  .partial()
  .strict()
  .refine(hasSomeField, emptyUpdateMessage)
export type ProjectUpdate = z.infer<typeof projectUpdateSchema>

/** Where each default limit comes from, worded for the people who set a project up (REFERENCE.md §2). */
export const defaultLimitSources = {
  standardMaxDb: 'ANSI/TIA-568.3-D (2016) splice maximum — from memory; ISO/IEC 11801 gives the same',
  contractTargetDb: 'Published municipal and campus specifications — common practice',
  attemptsBeforeAcceptWithFlag: 'Published municipal and campus specifications — common practice',
  photoRules: 'Common practice: trays and the closed closure photographed; single splices when over target',
  defaultMethod: 'Common practice: single-fiber fusion',
  otdrToleranceM: 'Common practice — how far an OTDR event may sit from the closure’s route position',
  disagreementDb: 'Common practice — how far the estimate may differ from the OTDR average',
} as const

/** Starting values for the OTDR matching settings a new project must give (common practice; the demo project uses them). */
export const defaultMatchingSettings = { otdrToleranceM: 15, disagreementDb: 0.15 } as const

import { z } from 'zod'
import { cableLayoutProblems, type CableLayout } from '../domain/colour'
import { emptyUpdateMessage, hasSomeField, idSchema, labelSchema } from './common'
import { cableConstructionSchema, colourSchemeSchema, fiberTypeSchema } from './enums'

const unitSizeSchema = z.number().int().min(1).max(24)

const cableFields = {
  id: idSchema,
  projectId: idSchema,
  label: labelSchema,
  fiberCount: z.number().int().min(1).max(3456),
  construction: cableConstructionSchema,
  /** Fibers per buffer tube (loose tube) or per ribbon (ribbon cables). */
  fibersPerUnit: unitSizeSchema,
  /** Per-tube fiber counts when a loose-tube cable's tubes differ; null when every tube holds `fibersPerUnit`. */
  unitCounts: z.array(unitSizeSchema).min(1).max(3456).nullable(),
  /** Ribbons per colour-coded tube, for ribbon cables that group ribbons in tubes. */
  ribbonsPerTube: z.number().int().min(1).max(288).nullable(),
  colourScheme: colourSchemeSchema,
  fiberType: fiberTypeSchema,
  lengthM: z.number().positive().max(1_000_000),
}

function checkLayout(cable: CableLayout, ctx: z.RefinementCtx): void {
  for (const problem of cableLayoutProblems(cable)) {
    ctx.addIssue({ code: 'custom', path: problem.path, message: problem.message })
  }
}

export const cableSchema = z.object(cableFields).superRefine(checkLayout)
export type Cable = z.infer<typeof cableSchema>

export const cableCreateSchema = z
  .object({
    ...cableFields,
    unitCounts: cableFields.unitCounts.default(null),
    ribbonsPerTube: cableFields.ribbonsPerTube.default(null),
    colourScheme: cableFields.colourScheme.default('tia598'),
  })
  .strict()
  .superRefine(checkLayout)
export type CableCreate = z.infer<typeof cableCreateSchema>

// Layout fields can only be checked against the stored cable: the server merges, then calls cableLayoutProblems.
export const cableUpdateSchema = z
  .object(cableFields)
  .omit({ id: true, projectId: true })
  .partial()
  .strict()
  .refine(hasSomeField, emptyUpdateMessage)
export type CableUpdate = z.infer<typeof cableUpdateSchema>

import { z } from 'zod'
import { idSchema } from './common'

const fiberSchema = z.number().int().min(1).max(3456)

const planRowFields = {
  id: idSchema,
  closureId: idSchema,
  trayId: idSchema,
  slot: z.number().int().min(1).max(144),
  cableAId: idSchema,
  fiberA: fiberSchema,
  cableBId: idSchema,
  fiberB: fiberSchema,
}

function checkEnds(
  row: { cableAId: string; fiberA: number; cableBId: string; fiberB: number },
  ctx: z.RefinementCtx,
): void {
  if (row.cableAId === row.cableBId && row.fiberA === row.fiberB) {
    ctx.addIssue({ code: 'custom', path: ['fiberB'], message: 'A fiber cannot be spliced to itself.' })
  }
}

export const planRowSchema = z.object(planRowFields).superRefine(checkEnds)
export type PlanRow = z.infer<typeof planRowSchema>

export const planRowCreateSchema = z.object(planRowFields).strict().superRefine(checkEnds)
export type PlanRowCreate = z.infer<typeof planRowCreateSchema>

/** A plan row before it has an id or a closure: what the generators and the CSV import produce. */
export const planRowDraftSchema = z
  .object(planRowFields)
  .omit({ id: true, closureId: true })
  .strict()
  .superRefine(checkEnds)
export type PlanRowDraft = z.infer<typeof planRowDraftSchema>

/** A change to one plan row; the server merges it into the stored row and checks the whole plan again. */
export const planRowUpdateSchema = z
  .object(planRowFields)
  .omit({ id: true, closureId: true })
  .partial()
  .strict()
  .refine((patch) => Object.keys(patch).length > 0, 'Give at least one field to change.')
export type PlanRowUpdate = z.infer<typeof planRowUpdateSchema>

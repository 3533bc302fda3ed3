import { z } from 'zod'
import { emptyUpdateMessage, hasSomeField, idSchema, labelSchema, noteSchema } from './common'
import { closureKindSchema, closureStateSchema } from './enums'

const closureFields = {
  id: idSchema,
  projectId: idSchema,
  label: labelSchema,
  kind: closureKindSchema,
  lat: z.number().min(-90).max(90).nullable(),
  lon: z.number().min(-180).max(180).nullable(),
  /** Distance along the route from the project's reference end, used to match OTDR events. */
  routePositionM: z.number().min(0).nullable(),
  /** Work at the roadside: traffic control applies. */
  roadside: z.boolean(),
  crewId: idSchema.nullable(),
  state: closureStateSchema,
}

function checkPosition(closure: { lat: number | null; lon: number | null }, ctx: z.RefinementCtx): void {
  if ((closure.lat === null) !== (closure.lon === null)) {
    ctx.addIssue({
      code: 'custom',
      path: [closure.lat === null ? 'lat' : 'lon'],
      message: 'Give both latitude and longitude, or neither.',
    })
  }
}

export const closureSchema = z.object(closureFields).superRefine(checkPosition)
export type Closure = z.infer<typeof closureSchema>

// A new closure is always 'planned'; its state moves only through sign-off and reopen.
export const closureCreateSchema = z
  .object({
    ...closureFields,
    lat: closureFields.lat.default(null),
    lon: closureFields.lon.default(null),
    routePositionM: closureFields.routePositionM.default(null),
    roadside: closureFields.roadside.default(false),
    crewId: closureFields.crewId.default(null),
  })
  .omit({ state: true })
  .strict()
  .superRefine(checkPosition)
export type ClosureCreate = z.infer<typeof closureCreateSchema>

// lat and lon are checked as a pair after the server merges the change into the stored closure.
export const closureUpdateSchema = z
  .object(closureFields)
  .pick({ label: true, kind: true, lat: true, lon: true, routePositionM: true, roadside: true, crewId: true })
  .partial()
  .strict()
  .refine(hasSomeField, emptyUpdateMessage)
export type ClosureUpdate = z.infer<typeof closureUpdateSchema>

export const closureSignOffSchema = z.object({ note: noteSchema.default('') }).strict()
export type ClosureSignOff = z.infer<typeof closureSignOffSchema>

export const closureReopenSchema = z.object({ reason: z.string().trim().min(1).max(500) }).strict()
export type ClosureReopen = z.infer<typeof closureReopenSchema>

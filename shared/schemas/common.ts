import { z } from 'zod'

/** Record ids are UUIDs made where the record is born (UUIDv7 on devices). */
export const idSchema = z.uuid()
export type Id = z.infer<typeof idSchema>

/** A short name as written on a tag or a plan: cable, closure, crew, project. */
export const labelSchema = z.string().trim().min(1).max(80)

/** Free text a person types, kept within what a report can print. */
export const noteSchema = z.string().max(2000)

/** An instant with its offset, as recorded (device time for field records). */
export const isoDateTimeSchema = z.iso.datetime({ offset: true })

// Thousandths of a dB is what splicers and OTDRs report; holding to it keeps sums exact.
/** A splice or OTDR loss reading in dB: negative readings are real (gainers). */
export const lossDbSchema = z.number().min(-1).max(10).multipleOf(0.001)

/** A loss limit in dB. */
export const limitDbSchema = z.number().min(0).max(10).multipleOf(0.001)

/** The one error body every failing route answers with. */
export const errorBodySchema = z.object({
  error: z.object({
    code: z.string().min(1),
    message: z.string(),
    details: z.unknown().optional(),
  }),
})
export type ErrorBody = z.infer<typeof errorBodySchema>

/** Query parameters of a paginated list; strings are coerced because they arrive in a URL. */
export const pageQuerySchema = z
  .object({
    limit: z.coerce.number().int().min(1).max(500).default(50),
    offset: z.coerce.number().int().min(0).default(0),
  })
  .strict()
export type PageQuery = z.infer<typeof pageQuerySchema>

/** Wraps an item schema as one page of a paginated list. */
export function pageSchema<T extends z.ZodType>(item: T) {
  return z.object({
    items: z.array(item),
    total: z.number().int().min(0),
    limit: z.number().int().min(1),
    offset: z.number().int().min(0),
  })
}

/** Tells whether an update body changes anything at all. */
export function hasSomeField(value: object): boolean {
  return Object.keys(value).length > 0
}

export const emptyUpdateMessage = 'Give at least one field to change.'

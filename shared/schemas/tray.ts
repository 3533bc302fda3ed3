import { z } from 'zod'
import { emptyUpdateMessage, hasSomeField, idSchema } from './common'

const trayFields = {
  id: idSchema,
  closureId: idSchema,
  number: z.number().int().min(1).max(999),
  /** Splice positions; a ribbon tray counts fibers (6 ribbons × 12 = 72), so one slot always holds one fiber pair. */
  capacity: z.number().int().min(1).max(144),
}

export const traySchema = z.object(trayFields)
export type Tray = z.infer<typeof traySchema>

export const trayCreateSchema = traySchema.strict()
export type TrayCreate = z.infer<typeof trayCreateSchema>

export const trayUpdateSchema = traySchema
  .pick({ number: true, capacity: true })
  .partial()
  .strict()
  .refine(hasSomeField, emptyUpdateMessage)
export type TrayUpdate = z.infer<typeof trayUpdateSchema>

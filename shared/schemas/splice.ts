import { z } from 'zod'
import {
  emptyUpdateMessage,
  hasSomeField,
  idSchema,
  isoDateTimeSchema,
  lossDbSchema,
  noteSchema,
} from './common'
import { respliceReasonSchema, spliceMethodSchema } from './enums'

const fiberSchema = z.number().int().min(1).max(3456)
const reasonTextSchema = z.string().trim().min(1).max(500)

const spliceFields = {
  id: idSchema,
  closureId: idSchema,
  trayId: idSchema,
  slot: z.number().int().min(1).max(144),
  cableAId: idSchema,
  fiberA: fiberSchema,
  cableBId: idSchema,
  fiberB: fiberSchema,
  method: spliceMethodSchema,
  /** The splicer's estimated loss in dB; null when the method gives none (mechanical) or it was not read. */
  lossDb: lossDbSchema.nullable(),
  attempt: z.number().int().min(1).max(99),
  respliceReason: respliceReasonSchema.nullable(),
  respliceNote: reasonTextSchema.nullable(),
  /** The earlier attempt this splice replaces; that attempt is then no longer current. */
  supersedesId: idSchema.nullable(),
  /** Why the splicer accepted a splice over the contract target after the allowed attempts. */
  acceptReason: reasonTextSchema.nullable(),
  notes: noteSchema,
  /** Device time when the splice was made. */
  splicedAt: isoDateTimeSchema,
  splicerId: idSchema,
  /** The device database that recorded it. */
  clientId: idSchema,
}

type SpliceLinks = {
  id: string
  cableAId: string
  fiberA: number
  cableBId: string
  fiberB: number
  attempt: number
  supersedesId: string | null
  respliceReason: string | null
}

function checkSplice(splice: SpliceLinks, ctx: z.RefinementCtx): void {
  if (splice.cableAId === splice.cableBId && splice.fiberA === splice.fiberB) {
    ctx.addIssue({ code: 'custom', path: ['fiberB'], message: 'A fiber cannot be spliced to itself.' })
  }
  if (splice.supersedesId === null) return
  if (splice.supersedesId === splice.id) {
    ctx.addIssue({ code: 'custom', path: ['supersedesId'], message: 'A splice cannot replace itself.' })
  }
  if (splice.attempt < 2) {
    ctx.addIssue({ code: 'custom', path: ['attempt'], message: 'A re-splice is attempt 2 or later.' })
  }
  if (splice.respliceReason === null) {
    ctx.addIssue({ code: 'custom', path: ['respliceReason'], message: 'Say why the splice was made again.' })
  }
}

export const spliceSchema = z.object(spliceFields).superRefine(checkSplice)
export type Splice = z.infer<typeof spliceSchema>

export const spliceCreateSchema = z
  .object({
    ...spliceFields,
    lossDb: spliceFields.lossDb.default(null),
    attempt: spliceFields.attempt.default(1),
    respliceReason: spliceFields.respliceReason.default(null),
    respliceNote: spliceFields.respliceNote.default(null),
    supersedesId: spliceFields.supersedesId.default(null),
    acceptReason: spliceFields.acceptReason.default(null),
    notes: spliceFields.notes.default(''),
  })
  .strict()
  .superRefine(checkSplice)
export type SpliceCreate = z.infer<typeof spliceCreateSchema>

// Who, when, where it was recorded and what it replaces are facts of the record, never edited.
export const spliceUpdateSchema = z
  .object(spliceFields)
  .omit({
    id: true,
    closureId: true,
    attempt: true,
    supersedesId: true,
    splicedAt: true,
    splicerId: true,
    clientId: true,
  })
  .partial()
  .strict()
  .refine(hasSomeField, emptyUpdateMessage)
export type SpliceUpdate = z.infer<typeof spliceUpdateSchema>

import { z } from 'zod'
import { idSchema, labelSchema, pageSchema } from './common'
import { closureKindSchema, closureStateSchema } from './enums'

/** One closure on the project board: the closure and its maintained roll-up. */
export const boardItemSchema = z.object({
  id: idSchema,
  projectId: idSchema,
  label: labelSchema,
  kind: closureKindSchema,
  lat: z.number().nullable(),
  lon: z.number().nullable(),
  routePositionM: z.number().nullable(),
  roadside: z.boolean(),
  crewId: idSchema.nullable(),
  state: closureStateSchema,
  signedOffBy: idSchema.nullable(),
  signedOffAt: z.string().nullable(),
  serverSeq: z.number().int(),
  planned: z.number().int(),
  logged: z.number().int(),
  offPlan: z.number().int(),
  lossCount: z.number().int(),
  lossSum: z.number(),
  lossMax: z.number().nullable(),
  lossMean: z.number().nullable(),
  overTarget: z.number().int(),
  overMaximum: z.number().int(),
  resplices: z.number().int(),
  mismatches: z.number().int(),
  photos: z.number().int(),
  lastActivityAt: z.string().nullable(),
  completionPct: z.number(),
})
export type BoardItem = z.infer<typeof boardItemSchema>

/** Completion bands of the board summary, in order: no plan yet, then by the share of planned pairs logged. */
export const completionBands = ['no_plan', '0', '1-49', '50-99', '100'] as const
export type CompletionBand = (typeof completionBands)[number]

/** Width (dB) of one bar of the summary's loss histogram; the last bar holds every mean from `lossBinCount × width` up. */
export const lossBinWidthDb = 0.02
export const lossBinCount = 15

/**
 * The roll-up of every closure the board's filters match (not only the page shown), read from the same
 * maintained totals as the rows: counts per state and completion band, and closures binned by their mean
 * estimated loss.
 */
export const boardSummarySchema = z.object({
  closures: z.number().int(),
  planned: z.number().int(),
  logged: z.number().int(),
  overTarget: z.number().int(),
  byState: z.record(closureStateSchema, z.number().int()),
  byCompletion: z.record(z.enum(completionBands), z.number().int()),
  /** Closures with at least one loss reading, per bin of lossBinWidthDb; bin i holds means in [i·w, (i+1)·w). */
  meanLossBins: z.array(z.number().int()).length(lossBinCount + 1),
  /** Closures with no loss reading yet (not in any bin). */
  noLoss: z.number().int(),
})
export type BoardSummary = z.infer<typeof boardSummarySchema>

export const boardPageSchema = pageSchema(boardItemSchema).extend({ summary: boardSummarySchema.optional() })
export type BoardPage = z.infer<typeof boardPageSchema>

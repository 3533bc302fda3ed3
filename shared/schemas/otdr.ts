import { z } from 'zod'
import { measuredFlags, otdrEventKinds } from '../domain/otdr'
import { labelSchema, limitDbSchema } from './common'
import { wavelengthSchema, wavelengths } from './enums'

/** The columns of Lightseam's OTDR event CSV, in order: one row per event, the trace's fields repeated on each. */
export const otdrCsvColumns = [
  'cable',
  'fiber',
  'from_end',
  'wavelength_nm',
  'fiber_length_m',
  'end_to_end_db',
  'distance_m',
  'loss_db',
  'reflectance_db',
  'kind',
] as const

const blankToNull = (value: unknown) => (value === '' || value === undefined ? null : value)
const number = z.coerce.number<string>().refine(Number.isFinite, 'Give a number.')
const optional = <T extends z.ZodType>(schema: T) => z.preprocess(blankToNull, schema.nullable())

/** One CSV row as read (all text); numbers are written with a dot, distances in metres, losses in dB. */
export const otdrCsvRowSchema = z
  .strictObject({
    cable: labelSchema,
    fiber: z.coerce.number<string>().int('Give a whole fiber number.').min(1).max(3456),
    from_end: z.enum(['A', 'B'], 'Write A (measured from the A end) or B (from the B end).'),
    wavelength_nm: z.coerce.number<string>().pipe(wavelengthSchema),
    fiber_length_m: number.pipe(z.number().positive().max(1_000_000)),
    end_to_end_db: optional(number.pipe(z.number().min(0).max(100))),
    distance_m: optional(number.pipe(z.number().min(-1_000).max(1_000_000))),
    loss_db: optional(number.pipe(z.number().min(-5).max(30))),
    reflectance_db: optional(number.pipe(z.number().min(-100).max(0))),
    kind: optional(z.enum(otdrEventKinds, `Write one of: ${otdrEventKinds.join(', ')}.`)),
  })
  .superRefine((row, ctx) => {
    const hasEvent = row.distance_m !== null || row.loss_db !== null || row.kind !== null
    if (hasEvent && row.distance_m === null)
      ctx.addIssue({ code: 'custom', path: ['distance_m'], message: 'An event needs its distance.' })
    if (hasEvent && row.kind === null)
      ctx.addIssue({ code: 'custom', path: ['kind'], message: 'An event needs its kind.' })
    if (hasEvent && row.kind !== 'end' && row.kind !== null && row.loss_db === null)
      ctx.addIssue({
        code: 'custom',
        path: ['loss_db'],
        message: 'A splice, connector or bend needs its loss.',
      })
  })
export type OtdrCsvRow = z.infer<typeof otdrCsvRowSchema>

/** The body of an import: one or more CSV files as text, each with the name it had on disk. */
export const otdrImportBodySchema = z.strictObject({
  files: z
    .array(
      z.strictObject({
        name: z.string().trim().min(1).max(200),
        text: z.string().min(1, 'The file is empty.').max(900_000),
      }),
    )
    .min(1, 'Choose at least one file.')
    .max(50),
})
export type OtdrImportBody = z.infer<typeof otdrImportBodySchema>

/** A problem in one row of one file; `row` counts the header as row 1, as a spreadsheet shows it. */
export const otdrRowProblemSchema = z.object({
  file: z.string(),
  row: z.number().int(),
  field: z.string().nullable(),
  message: z.string(),
})
export type OtdrRowProblem = z.infer<typeof otdrRowProblemSchema>

export const otdrImportResultSchema = z.object({
  files: z.array(
    z.object({
      name: z.string(),
      sha256: z.string(),
      status: z.enum(['imported', 'unchanged']),
      importId: z.string(),
      traces: z.number().int(),
      events: z.number().int(),
      unmatched: z.number().int(),
    }),
  ),
})
export type OtdrImportResult = z.infer<typeof otdrImportResultSchema>

const dbPerKmSchema = z.number().min(0).max(10).multipleOf(0.001)

/** Loss budget allowances a project sets; a null field (or a wavelength not listed) falls back to the TIA-568.3-D default. */
export const lossBudgetSettingsSchema = z.strictObject({
  /** Cable attenuation (dB/km) for every wavelength not listed below. */
  attenuationDbPerKm: dbPerKmSchema.nullable(),
  /** Cable attenuation of particular wavelengths. */
  attenuationByWavelength: z
    .array(z.strictObject({ wavelength: wavelengthSchema, dbPerKm: dbPerKmSchema }))
    .max(wavelengths.length)
    .superRefine((rows, ctx) => {
      const seen = new Set<number>()
      rows.forEach((row, i) => {
        if (seen.has(row.wavelength))
          ctx.addIssue({
            code: 'custom',
            path: [i, 'wavelength'],
            message: `${row.wavelength} nm is listed twice.`,
          })
        seen.add(row.wavelength)
      })
    }),
  spliceLossDb: limitDbSchema.nullable(),
  connectorPairLossDb: limitDbSchema.nullable(),
  marginDb: z.number().min(0).max(50).multipleOf(0.001).nullable(),
})
export type LossBudgetSettings = z.infer<typeof lossBudgetSettingsSchema>

const allowanceSchema = z.object({ value: z.number(), source: z.string() })
export const effectiveAllowancesSchema = z.object({
  wavelengthNm: z.number(),
  attenuationDbPerKm: allowanceSchema,
  spliceLossDb: allowanceSchema,
  connectorPairLossDb: allowanceSchema,
  marginDb: allowanceSchema,
})

/** The answer of GET/PUT /api/projects/:projectId/loss-budget: what the project set and what each wavelength's budget uses. */
export const lossBudgetViewSchema = z.object({
  projectId: z.string(),
  settings: lossBudgetSettingsSchema,
  effective: z.array(effectiveAllowancesSchema),
})
export type LossBudgetView = z.infer<typeof lossBudgetViewSchema>

export const fiberPathQuerySchema = z.strictObject({
  cableId: z.uuid(),
  fiber: z.coerce.number<string>().int().min(1).max(3456),
})

/** One measured result of a splice at one wavelength, as the reconciliation shows it. */
export const measuredResultSchema = z.object({
  wavelengthNm: z.number(),
  abDb: z.number().nullable(),
  baDb: z.number().nullable(),
  kind: z.enum(['average', 'one_way', 'both_negative', 'no_reading']),
  averageDb: z.number().nullable(),
  gainer: z.string().nullable(),
  flags: z.array(z.enum(measuredFlags)),
})
export type MeasuredResult = z.infer<typeof measuredResultSchema>

export const reconciliationSpliceSchema = z.object({
  id: z.string(),
  closureId: z.string(),
  closureLabel: z.string(),
  trayNumber: z.number(),
  slot: z.number(),
  cableA: z.string(),
  fiberA: z.number(),
  cableB: z.string(),
  fiberB: z.number(),
  estimateDb: z.number().nullable(),
  measured: z.array(measuredResultSchema),
  untested: z.array(z.number()),
})
export type ReconciliationSplice = z.infer<typeof reconciliationSpliceSchema>

/** An OTDR event near no splice of its path: where it lies along the route and between which closures. */
export const unmatchedEventSchema = z.object({
  id: z.string(),
  fileName: z.string(),
  row: z.number(),
  wavelengthNm: z.number(),
  direction: z.enum(['a_to_b', 'b_to_a']),
  distanceM: z.number(),
  fromAM: z.number(),
  lossDb: z.number().nullable(),
  kind: z.enum(otdrEventKinds),
  routePositionM: z.number().nullable(),
  afterClosure: z.string().nullable(),
  beforeClosure: z.string().nullable(),
  cable: z.string().nullable(),
})
export type UnmatchedEvent = z.infer<typeof unmatchedEventSchema>

/** The answer of GET /api/closures/:closureId/reconciliation and GET /api/cables/:cableId/reconciliation. */
export const reconciliationSchema = z.object({
  closure: z.object({ id: z.string(), label: z.string() }).optional(),
  cable: z.object({ id: z.string(), label: z.string() }).optional(),
  wavelengths: z.array(z.number()),
  splices: z.array(reconciliationSpliceSchema),
  unmatched: z.array(unmatchedEventSchema),
  counts: z.object({ splices: z.number(), untested: z.number(), flagged: z.number() }),
})
export type Reconciliation = z.infer<typeof reconciliationSchema>

const pathEndSchema = z.discriminatedUnion('kind', [
  z.object({ kind: z.literal('terminal') }),
  z.object({ kind: z.literal('dead_end'), closureId: z.string() }),
  z.object({ kind: z.literal('loop'), joinId: z.string() }),
  z.object({ kind: z.literal('branch'), joinIds: z.array(z.string()) }),
])
export type FiberPathEnd = z.infer<typeof pathEndSchema>

/** The answer of GET /api/projects/:projectId/fiber-path. */
export const fiberPathSchema = z.object({
  lengthM: z.number(),
  aEnd: pathEndSchema,
  bEnd: pathEndSchema,
  complete: z.boolean(),
  connectorPairs: z.number(),
  segments: z.array(
    z.object({
      cableId: z.string(),
      cable: z.string(),
      fiber: z.number(),
      fromM: z.number(),
      toM: z.number(),
      startsAtM: z.number(),
      lengthM: z.number(),
    }),
  ),
  splices: z.array(
    z.object({
      joinId: z.string(),
      closureId: z.string(),
      closure: z.string(),
      atM: z.number(),
      estimateDb: z.number().nullable(),
    }),
  ),
  budgets: z.array(
    z.object({
      wavelengthNm: z.number(),
      allowances: effectiveAllowancesSchema,
      splices: z.array(
        z.object({
          spliceId: z.string(),
          lossDb: z.number(),
          source: z.enum(['measured', 'estimated', 'allowance']),
        }),
      ),
      allowedDb: z.number(),
      expectedDb: z.number(),
      marginDb: z.number(),
      pass: z.boolean(),
      measuredEndToEndDb: z.number().nullable(),
      measuredMarginDb: z.number().nullable(),
      measuredPass: z.boolean().nullable(),
    }),
  ),
})
export type FiberPathView = z.infer<typeof fiberPathSchema>

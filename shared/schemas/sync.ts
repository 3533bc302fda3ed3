import { z } from 'zod'
import { idSchema, isoDateTimeSchema, noteSchema } from './common'
import { spliceCreateSchema, spliceUpdateSchema } from './splice'

/** The version of the push/pull contract a device speaks; the server refuses versions it does not know. */
export const syncSchemaVersion = 1

/** Lowercase hex sha256 of a photo's exact bytes. */
export const sha256Schema = z.string().regex(/^[0-9a-f]{64}$/, 'A photo hash is 64 lowercase hex digits.')

const reasonSchema = z.string().trim().min(1).max(500)

/** What each mutation carries; the server validates args with these when it applies the mutation. */
export const mutationArgsSchemas = {
  createSplice: spliceCreateSchema,
  /** A later attempt at the same fiber pair: `supersedesId`, `attempt` ≥ 2 and a reason are required. */
  resplice: spliceCreateSchema,
  updateSplice: z.object({ id: idSchema, fields: spliceUpdateSchema }).strict(),
  /** Removes the splicer's own splice before anyone has reviewed it (a draft logged by mistake). */
  deleteSplice: z.object({ id: idSchema }).strict(),
  addPhotoLink: z
    .object({
      id: idSchema,
      sha256: sha256Schema,
      entity: z.enum(['splice', 'tray', 'closure']),
      entityId: idSchema,
    })
    .strict(),
  removePhotoLink: z.object({ id: idSchema }).strict(),
  addNote: z
    .object({
      id: idSchema,
      entity: z.enum(['closure', 'splice']),
      entityId: idSchema,
      body: noteSchema.min(1),
    })
    .strict(),
  setClosurePosition: z
    .object({
      closureId: idSchema,
      lat: z.number().min(-90).max(90),
      lon: z.number().min(-180).max(180),
      routePositionM: z.number().min(0).nullable().optional(),
    })
    .strict(),
  signOffClosure: z.object({ closureId: idSchema, note: noteSchema.default('') }).strict(),
  reopenClosure: z.object({ closureId: idSchema, reason: reasonSchema }).strict(),
  /** The foreman's verdict on a splice: accepted as it is, or sent back to the splicer; always with a reason. */
  reviewSplice: z
    .object({ id: idSchema, verdict: z.enum(['accepted', 'sent_back']), reason: reasonSchema })
    .strict(),
} as const

export type MutationName = keyof typeof mutationArgsSchemas
export const mutationNames = Object.keys(mutationArgsSchemas) as MutationName[]
export const mutationNameSchema = z.enum(mutationNames as [MutationName, ...MutationName[]])
export type MutationArgs<N extends MutationName> = z.input<(typeof mutationArgsSchemas)[N]>

/** One outbox entry as it travels: args stay opaque until the server applies the mutation. */
export const mutationSchema = z
  .object({
    seq: z.number().int().min(1),
    name: mutationNameSchema,
    // Any JSON object: its keys are strings already, and the mutation's own schema checks it when applied.
    // (A record schema would check and copy every key of every pushed mutation: a sixth of the envelope.)
    args: z.custom<Record<string, unknown>>(
      (value) => typeof value === 'object' && value !== null && !Array.isArray(value),
      'The arguments of a change are a JSON object.',
    ),
    /** The highest server change the device had seen when the user made the edit (conflict detection). */
    baseServerSeq: z.number().int().min(0),
    /** Device clock at the edit; stored as recorded, orders nothing. */
    clientTime: isoDateTimeSchema,
  })
  .strict()
export type Mutation = z.infer<typeof mutationSchema>

export const maxMutationsPerPush = 100

export const pushBodySchema = z
  .object({
    clientId: idSchema,
    schemaVersion: z.literal(syncSchemaVersion),
    mutations: z.array(mutationSchema).min(1).max(maxMutationsPerPush),
  })
  .strict()
export type PushBody = z.infer<typeof pushBodySchema>

/** A value the server kept over the device's: shown as "your value X was replaced by Y (by Z)". */
export const overwrittenSchema = z.object({
  field: z.string(),
  yours: z.unknown(),
  kept: z.unknown(),
  byUserId: z.string().nullable(),
  byName: z.string().nullable(),
})
export type Overwritten = z.infer<typeof overwrittenSchema>

export const mutationStatuses = ['applied', 'merged', 'duplicate', 'rejected', 'gap'] as const
export const mutationResultSchema = z.object({
  seq: z.number().int(),
  status: z.enum(mutationStatuses),
  /** For `rejected`: why, as a stable code (invalid, forbidden, closure_locked, not_found, conflict …). */
  code: z.string().optional(),
  message: z.string().optional(),
  /** For `merged`: fields where a newer or stronger value won over the device's. */
  overwritten: z.array(overwrittenSchema).optional(),
  /** For `gap`: the seq the server expects next. */
  expectedSeq: z.number().int().optional(),
})
export type MutationResult = z.infer<typeof mutationResultSchema>

export const pushResponseSchema = z.object({
  results: z.array(mutationResultSchema),
  /** The last seq the server has accounted for from this client. */
  lastSeq: z.number().int().min(0),
})
export type PushResponse = z.infer<typeof pushResponseSchema>

export const pullQuerySchema = z
  .object({
    cursor: z.coerce.number().int().min(0).default(0),
    limit: z.coerce.number().int().min(1).max(1000).default(500),
    clientId: idSchema.optional(),
  })
  .strict()
export type PullQuery = z.infer<typeof pullQuerySchema>

/** Record tables a device mirrors. */
export const syncedTables = [
  'projects',
  'cables',
  'closures',
  'closureAssignments',
  'trays',
  'planRows',
  'splices',
  'photoLinks',
  'notes',
] as const
export const syncedTableSchema = z.enum(syncedTables)
export type SyncedTable = (typeof syncedTables)[number]

/** One changed row; a tombstone has `deleted: true` (and may still carry the last row). */
export const changeSchema = z.object({
  table: syncedTableSchema,
  id: z.string(),
  serverSeq: z.number().int().min(1),
  deleted: z.boolean(),
  row: z.record(z.string(), z.unknown()).nullable(),
})
export type Change = z.infer<typeof changeSchema>

export const pullResponseSchema = z.object({
  changes: z.array(changeSchema),
  cursor: z.number().int().min(0),
  hasMore: z.boolean(),
  /** The last mutation seq the server has accounted for from the asking client (0 when unknown). */
  lastMutationSeq: z.number().int().min(0),
})
export type PullResponse = z.infer<typeof pullResponseSchema>

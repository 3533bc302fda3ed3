import { sql } from 'drizzle-orm'
import { index, integer, primaryKey, real, sqliteTable, text, uniqueIndex } from 'drizzle-orm/sqlite-core'
import { otdrEventKinds } from '#shared/domain/otdr'
import { closures } from './closures'
import { users } from './people'
import { cables, projects } from './projects'
import { splices } from './splices'

// OTDR results are office records: they never sync to devices, so they carry no server_seq or tombstone.

/** One imported CSV file; the same bytes imported again are recognised by their sha256 and change nothing. */
export const otdrImports = sqliteTable(
  'otdr_imports',
  {
    id: text('id').primaryKey(),
    projectId: text('project_id')
      .notNull()
      .references(() => projects.id),
    fileName: text('file_name').notNull(),
    sha256: text('sha256').notNull(),
    importedBy: text('imported_by')
      .notNull()
      .references(() => users.id),
    importedAt: text('imported_at').notNull(),
    traceCount: integer('trace_count').notNull(),
    eventCount: integer('event_count').notNull(),
  },
  (t) => [
    uniqueIndex('otdr_imports_project_sha').on(t.projectId, t.sha256),
    index('otdr_imports_project_time').on(t.projectId, t.importedAt),
  ],
)

/** One trace: a fiber shot from one end at one wavelength; the path it lies on is named by the fiber at its A end. */
export const otdrTraces = sqliteTable(
  'otdr_traces',
  {
    id: text('id').primaryKey(),
    importId: text('import_id')
      .notNull()
      .references(() => otdrImports.id),
    projectId: text('project_id')
      .notNull()
      .references(() => projects.id),
    cableId: text('cable_id')
      .notNull()
      .references(() => cables.id),
    fiber: integer('fiber').notNull(),
    direction: text('direction', { enum: ['a_to_b', 'b_to_a'] }).notNull(),
    wavelengthNm: integer('wavelength_nm').notNull(),
    fiberLengthM: real('fiber_length_m').notNull(),
    endToEndDb: real('end_to_end_db'),
    pathCableId: text('path_cable_id')
      .notNull()
      .references(() => cables.id),
    pathFiber: integer('path_fiber').notNull(),
  },
  (t) => [
    index('otdr_traces_import').on(t.importId),
    // The end-to-end figure of a path: the newest trace per path, wavelength and direction.
    index('otdr_traces_path').on(t.projectId, t.pathCableId, t.pathFiber, t.wavelengthNm),
  ],
)

/** One event row of a trace, with what it matched: a splice at a closure, a path end, or nothing. */
export const otdrEvents = sqliteTable(
  'otdr_events',
  {
    id: text('id').primaryKey(),
    traceId: text('trace_id')
      .notNull()
      .references(() => otdrTraces.id),
    /** The row of the file it came from (header = row 1). */
    row: integer('row').notNull(),
    distanceM: real('distance_m').notNull(),
    /** The same distance from the path's A end (B-end readings converted with the trace's fiber length). */
    fromAM: real('from_a_m').notNull(),
    lossDb: real('loss_db'),
    reflectanceDb: real('reflectance_db'),
    kind: text('kind', { enum: otdrEventKinds }).notNull(),
    match: text('match', { enum: ['join', 'path_end', 'unmatched', 'duplicate'] }).notNull(),
    spliceId: text('splice_id').references(() => splices.id),
    closureId: text('closure_id').references(() => closures.id),
    /** For an unmatched event: the route position (m from the origin) and the closures either side. */
    routePositionM: real('route_position_m'),
    afterClosureId: text('after_closure_id').references(() => closures.id),
    beforeClosureId: text('before_closure_id').references(() => closures.id),
    onCableId: text('on_cable_id').references(() => cables.id),
  },
  (t) => [
    index('otdr_events_trace').on(t.traceId),
    index('otdr_events_splice').on(t.spliceId),
    index('otdr_events_unmatched').on(t.match, t.onCableId),
  ],
)

/** The measured loss of one splice at one wavelength: the newest reading from each end and what they make. */
export const otdrSpliceResults = sqliteTable(
  'otdr_splice_results',
  {
    spliceId: text('splice_id')
      .notNull()
      .references(() => splices.id),
    wavelengthNm: integer('wavelength_nm').notNull(),
    closureId: text('closure_id')
      .notNull()
      .references(() => closures.id),
    abDb: real('ab_db'),
    baDb: real('ba_db'),
    kind: text('kind', { enum: ['average', 'one_way', 'both_negative'] }).notNull(),
    /** The bidirectional average; null for one-way and both-negative results. */
    averageDb: real('average_db'),
    abEventId: text('ab_event_id').references(() => otdrEvents.id),
    baEventId: text('ba_event_id').references(() => otdrEvents.id),
    updatedAt: text('updated_at').notNull(),
  },
  (t) => [
    primaryKey({ columns: [t.spliceId, t.wavelengthNm] }),
    index('otdr_splice_results_closure').on(t.closureId),
  ],
)

/** A project's own loss budget allowances; a null column means the TIA-568.3-D default. */
export const lossBudgetSettings = sqliteTable('loss_budget_settings', {
  projectId: text('project_id')
    .primaryKey()
    .references(() => projects.id),
  /** Cable attenuation for every wavelength not listed in `attenuationByWavelength`. */
  attenuationDbPerKm: real('attenuation_db_per_km'),
  /** Cable attenuation of particular wavelengths, e.g. 1310 and 1550 nm apart. */
  attenuationByWavelength: text('attenuation_by_wavelength', { mode: 'json' })
    .$type<{ wavelength: number; dbPerKm: number }[]>()
    .notNull()
    .default(sql`'[]'`),
  spliceLossDb: real('splice_loss_db'),
  connectorPairLossDb: real('connector_pair_loss_db'),
  marginDb: real('margin_db'),
})

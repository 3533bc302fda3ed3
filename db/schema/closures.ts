import { sql } from 'drizzle-orm'
import { index, integer, primaryKey, real, sqliteTable, text, uniqueIndex } from 'drizzle-orm/sqlite-core'
import { closureKinds, closureStates } from '#shared/schemas/enums'
import { deleted, serverSeq } from './columns'
import { crews, users } from './people'
import { cables, projects } from './projects'

// A closure row gets its closure_totals row from a trigger (migration 0001), so the board's inner join
// never drops a closure. drizzle-kit does not know the trigger: a generated migration that rebuilds this
// table drops it, and must be followed by a custom migration that creates it again.
export const closures = sqliteTable(
  'closures',
  {
    id: text('id').primaryKey(),
    projectId: text('project_id')
      .notNull()
      .references(() => projects.id),
    label: text('label').notNull(),
    kind: text('kind', { enum: closureKinds }).notNull(),
    lat: real('lat'),
    lon: real('lon'),
    routePositionM: real('route_position_m'),
    roadside: integer('roadside', { mode: 'boolean' }).notNull().default(false),
    crewId: text('crew_id').references(() => crews.id),
    state: text('state', { enum: closureStates }).notNull().default('planned'),
    signedOffBy: text('signed_off_by').references(() => users.id),
    signedOffAt: text('signed_off_at'),
    serverSeq: serverSeq(),
    deleted: deleted(),
  },
  (t) => [
    // The id tails let the board page through ties in index order, without a sort step.
    index('closures_project_label').on(t.projectId, t.label, t.id),
    index('closures_project_route').on(t.projectId, t.routePositionM, t.id),
    // Live closures only: the board's count and state filter read this index alone, never the rows.
    index('closures_project_state')
      .on(t.projectId, t.state)
      .where(sql`${t.deleted} = 0`),
    index('closures_crew').on(t.crewId),
    index('closures_server_seq').on(t.serverSeq),
  ],
)

// Synced like the other records (a splicer's device pulls its day's list), hence server_seq and a tombstone
// for an assignment taken away.
export const closureAssignments = sqliteTable(
  'closure_assignments',
  {
    closureId: text('closure_id')
      .notNull()
      .references(() => closures.id),
    userId: text('user_id')
      .notNull()
      .references(() => users.id),
    position: integer('position').notNull(),
    assignedBy: text('assigned_by')
      .notNull()
      .references(() => users.id),
    assignedAt: text('assigned_at').notNull(),
    serverSeq: serverSeq(),
    deleted: deleted(),
  },
  (t) => [
    primaryKey({ columns: [t.closureId, t.userId] }),
    index('closure_assignments_user').on(t.userId, t.position),
    index('closure_assignments_server_seq').on(t.serverSeq),
  ],
)

export const trays = sqliteTable(
  'trays',
  {
    id: text('id').primaryKey(),
    closureId: text('closure_id')
      .notNull()
      .references(() => closures.id),
    number: integer('number').notNull(),
    // Slots in the tray: 12 or 24 single-fusion splices, or fibers for a ribbon tray (6 ribbons = 72).
    capacity: integer('capacity').notNull(),
    serverSeq: serverSeq(),
    deleted: deleted(),
  },
  (t) => [
    uniqueIndex('trays_closure_number').on(t.closureId, t.number),
    index('trays_server_seq').on(t.serverSeq),
  ],
)

export const planRows = sqliteTable(
  'plan_rows',
  {
    id: text('id').primaryKey(),
    closureId: text('closure_id')
      .notNull()
      .references(() => closures.id),
    trayId: text('tray_id')
      .notNull()
      .references(() => trays.id),
    slot: integer('slot').notNull(),
    cableAId: text('cable_a_id')
      .notNull()
      .references(() => cables.id),
    fiberA: integer('fiber_a').notNull(),
    cableBId: text('cable_b_id')
      .notNull()
      .references(() => cables.id),
    fiberB: integer('fiber_b').notNull(),
    serverSeq: serverSeq(),
    deleted: deleted(),
  },
  (t) => [
    // Only live rows hold a slot: a replaced plan leaves tombstones (for sync) at the same slots.
    uniqueIndex('plan_rows_tray_slot_live')
      .on(t.trayId, t.slot)
      .where(sql`${t.deleted} = 0`),
    index('plan_rows_closure').on(t.closureId),
    index('plan_rows_live_pair')
      .on(t.closureId, t.cableAId, t.fiberA, t.cableBId, t.fiberB)
      .where(sql`${t.deleted} = 0`),
    index('plan_rows_server_seq').on(t.serverSeq),
  ],
)

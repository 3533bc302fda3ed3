import { sql } from 'drizzle-orm'
import { type AnySQLiteColumn, index, integer, real, sqliteTable, text } from 'drizzle-orm/sqlite-core'
import { respliceReasons, spliceMethods } from '#shared/schemas/enums'
import { closures, trays } from './closures'
import { deleted, serverSeq } from './columns'
import { users } from './people'
import { cables } from './projects'
import { reviewStates } from './values'

export const splices = sqliteTable(
  'splices',
  {
    // UUIDv7 made on the device, so an offline splice can be referenced (re-spliced, photographed) at once.
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
    method: text('method', { enum: spliceMethods }).notNull(),
    // The splicer's estimated loss; null when the splicer could not read one (mechanical splices).
    lossDb: real('loss_db'),
    attempt: integer('attempt').notNull().default(1),
    respliceReason: text('resplice_reason', { enum: respliceReasons }),
    respliceNote: text('resplice_note'),
    // The foreign key makes a re-splice arrive after the attempt it replaces, so the chain is always whole.
    supersedesId: text('supersedes_id').references((): AnySQLiteColumn => splices.id),
    acceptReason: text('accept_reason'),
    notes: text('notes').notNull().default(''),
    // Device time, stored as recorded; it orders nothing (device clocks drift).
    splicedAt: text('spliced_at').notNull(),
    splicerId: text('splicer_id')
      .notNull()
      .references(() => users.id),
    clientId: text('client_id').notNull(),
    isCurrent: integer('is_current', { mode: 'boolean' }).notNull().default(true),
    flags: text('flags', { mode: 'json' }).$type<string[]>().notNull().default([]),
    reviewState: text('review_state', { enum: reviewStates }),
    // Why the foreman accepted the splice or sent it back, who did and when (server time); cleared with the state.
    reviewReason: text('review_reason'),
    reviewedBy: text('reviewed_by').references(() => users.id),
    reviewedAt: text('reviewed_at'),
    createdAt: text('created_at').notNull(),
    serverSeq: serverSeq(),
    deleted: deleted(),
  },
  (t) => [
    index('splices_closure_current').on(t.closureId, t.isCurrent),
    index('splices_closure_slot').on(t.closureId, t.trayId, t.slot),
    index('splices_splicer_time').on(t.splicerId, t.splicedAt),
    index('splices_supersedes').on(t.supersedesId),
    index('splices_server_seq').on(t.serverSeq),
    // Lets a roll-up find a closure's worst current splice without reading its rows, e.g. after the
    // worst one is re-spliced.
    // Finds the current splices joining a fiber pair (either orientation is a second lookup), which the
    // maintained totals need on every write.
    index('splices_current_pair')
      .on(t.closureId, t.cableAId, t.fiberA, t.cableBId, t.fiberB)
      .where(sql`${t.isCurrent} = 1 AND ${t.deleted} = 0`),
    // The other end's lookups of the same question (a fiber already spliced on its B side), so finding a
    // splice's neighbours is four index probes rather than a walk over the closure's current splices.
    index('splices_current_b_end')
      .on(t.closureId, t.cableBId, t.fiberB)
      .where(sql`${t.isCurrent} = 1 AND ${t.deleted} = 0`),
    index('splices_current_loss')
      .on(t.closureId, t.lossDb)
      .where(sql`${t.isCurrent} = 1 AND ${t.deleted} = 0`),
  ],
)

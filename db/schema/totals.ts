import { sql } from 'drizzle-orm'
import { index, integer, real, sqliteTable, text } from 'drizzle-orm/sqlite-core'
import { closures } from './closures'
import { projects } from './projects'

// Derived, never synced: kept up to date in the same transaction as every splice and plan write, so the
// board reads one row per closure however many splices the closure holds. Every column means what shared
// rollUpClosure means by it (tests/unit/db/rollup-parity.test.ts), so the phone and the board agree.
export const closureTotals = sqliteTable(
  'closure_totals',
  {
    closureId: text('closure_id')
      .primaryKey()
      .references(() => closures.id),
    projectId: text('project_id')
      .notNull()
      .references(() => projects.id),
    // Plan rows, and plan rows whose fiber pair (either orientation) a current splice joins anywhere in the
    // closure: a pair spliced in the wrong slot is still logged (and counts as a mismatch below).
    planned: integer('planned').notNull().default(0),
    logged: integer('logged').notNull().default(0),
    // Current splices joining a pair the closure's plan does not have at all, whatever their slot.
    offPlan: integer('off_plan').notNull().default(0),
    // Current splices with an estimated loss; each loss is rounded to whole thousandths of a dB first (shared
    // toMilliDb), so loss_sum is an exact sum of thousandths / 1000, in any order, and loss_max the highest.
    lossCount: integer('loss_count').notNull().default(0),
    lossSum: real('loss_sum').notNull().default(0),
    lossMax: real('loss_max'),
    // Current splices above the estimate target (over_target, accepted_with_flag or over_maximum in shared
    // lossStatus: an accept reason does not take a splice off this count), and those above the maximum.
    overTarget: integer('over_target').notNull().default(0),
    overMaximum: integer('over_maximum').notNull().default(0),
    // Attempts superseded by a later one.
    resplices: integer('resplices').notNull().default(0),
    // Current splices whose slot has no plan row or a row for another pair: a wrong slot or a wrong pair, so
    // not a subset of off_plan (a planned pair in another slot is a mismatch but on the plan).
    mismatches: integer('mismatches').notNull().default(0),
    // Current splices with at least one live photo link.
    photos: integer('photos').notNull().default(0),
    lastActivityAt: text('last_activity_at'),
    // Generated so that sorting the board by completion can walk an index instead of sorting every closure.
    completionPct: real('completion_pct').generatedAlwaysAs(
      sql`CASE WHEN planned > 0 THEN round(100.0 * logged / planned, 1) ELSE 0 END`,
      { mode: 'virtual' },
    ),
  },
  (t) => [
    // Leads with project_id, so it also serves every plain per-project lookup.
    index('closure_totals_project_completion').on(t.projectId, t.completionPct, t.closureId),
    index('closure_totals_project_over_target').on(t.projectId, t.overTarget, t.closureId),
    index('closure_totals_project_activity').on(t.projectId, t.lastActivityAt, t.closureId),
  ],
)

import { sql } from 'drizzle-orm'
import { index, integer, real, sqliteTable, text } from 'drizzle-orm/sqlite-core'
import { closures } from './closures'
import { projects } from './projects'

// Derived, never synced: kept up to date in the same transaction as every splice and plan write, so the
// board reads one row per closure however many splices the closure holds.
export const closureTotals = sqliteTable(
  'closure_totals',
  {
    closureId: text('closure_id')
      .primaryKey()
      .references(() => closures.id),
    projectId: text('project_id')
      .notNull()
      .references(() => projects.id),
    // Plan rows, and plan rows with a current splice joining exactly the planned pair.
    planned: integer('planned').notNull().default(0),
    logged: integer('logged').notNull().default(0),
    // Current splices that do not match their slot's plan row (no row there, or another pair).
    offPlan: integer('off_plan').notNull().default(0),
    lossCount: integer('loss_count').notNull().default(0),
    lossSum: real('loss_sum').notNull().default(0),
    lossMax: real('loss_max'),
    overTarget: integer('over_target').notNull().default(0),
    overMaximum: integer('over_maximum').notNull().default(0),
    resplices: integer('resplices').notNull().default(0),
    // Current splices at a planned slot joining another pair than planned (wrong fiber pair).
    mismatches: integer('mismatches').notNull().default(0),
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

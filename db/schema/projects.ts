import { index, integer, real, sqliteTable, text, uniqueIndex } from 'drizzle-orm/sqlite-core'
import { cableConstructions, colourSchemes, fiberTypes, spliceMethods } from '#shared/schemas/enums'
import type { PhotoRules, ProjectLimits } from '#shared/schemas/project'
import { deleted, serverSeq } from './columns'

export const projects = sqliteTable(
  'projects',
  {
    id: text('id').primaryKey(),
    code: text('code').notNull(),
    name: text('name').notNull(),
    limits: text('limits', { mode: 'json' }).$type<ProjectLimits>().notNull(),
    photoRules: text('photo_rules', { mode: 'json' }).$type<PhotoRules>().notNull(),
    defaultMethod: text('default_method', { enum: spliceMethods }).notNull().default('single_fusion'),
    otdrToleranceM: real('otdr_tolerance_m').notNull(),
    disagreementDb: real('disagreement_db').notNull(),
    serverSeq: serverSeq(),
    deleted: deleted(),
  },
  (t) => [uniqueIndex('projects_code').on(t.code), index('projects_server_seq').on(t.serverSeq)],
)

export const cables = sqliteTable(
  'cables',
  {
    id: text('id').primaryKey(),
    projectId: text('project_id')
      .notNull()
      .references(() => projects.id),
    label: text('label').notNull(),
    fiberCount: integer('fiber_count').notNull(),
    construction: text('construction', { enum: cableConstructions }).notNull(),
    // Fibers per buffer tube (loose tube) or per ribbon (ribbon).
    fibersPerUnit: integer('fibers_per_unit').notNull(),
    // Only for cables whose tubes differ in size; null means every unit holds fibersPerUnit.
    unitCounts: text('unit_counts', { mode: 'json' }).$type<number[]>(),
    ribbonsPerTube: integer('ribbons_per_tube'),
    colourScheme: text('colour_scheme', { enum: colourSchemes }).notNull().default('tia598'),
    fiberType: text('fiber_type', { enum: fiberTypes }).notNull(),
    lengthM: real('length_m').notNull(),
    serverSeq: serverSeq(),
    deleted: deleted(),
  },
  (t) => [index('cables_project_label').on(t.projectId, t.label), index('cables_server_seq').on(t.serverSeq)],
)

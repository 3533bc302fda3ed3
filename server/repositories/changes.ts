import { and, asc, eq, getTableColumns, gt, lte, sql, type SQL } from 'drizzle-orm'
import type { SQLiteColumn, SQLiteTable } from 'drizzle-orm/sqlite-core'
import type { Conn } from '#db/client'
import {
  cables,
  closureAssignments,
  closures,
  notes,
  photoLinks,
  planRows,
  projects,
  splices,
  trays,
} from '#db/schema/index'
import type { SyncedTable } from '#shared/schemas/sync'
import { dbOf } from './records'

// The synced tables as pull reads them: for each, how its rows reach a closure (scope follows the closure),
// and the row shape devices mirror (the REST shape, camelCase).

/** Who is pulling, as far as row scope goes. */
export type PullScope = { kind: 'all' } | { kind: 'crew'; crewId: string | null } | { kind: 'signedOff' }

interface Source {
  table: SyncedTable
  dbTable: SQLiteTable
  serverSeq: SQLiteColumn
  /** The closure id a row belongs to; null for project-level tables (projects, cables). */
  closureOf: SQL | null
  /** The project id of a project-level row. */
  projectOf?: SQL
  select: Record<string, unknown>
  idOf: (row: Record<string, unknown>) => string
  shape?: (row: Record<string, unknown>) => Record<string, unknown>
}

const byId = (row: Record<string, unknown>) => row.id as string

// Photo and note targets point at a record of the closure, not at the closure itself.
const photoClosure = sql`(CASE ${photoLinks.entity}
  WHEN 'closure' THEN ${photoLinks.entityId}
  WHEN 'tray' THEN (SELECT t.closure_id FROM trays t WHERE t.id = ${photoLinks.entityId})
  WHEN 'splice' THEN (SELECT s.closure_id FROM splices s WHERE s.id = ${photoLinks.entityId}) END)`
const noteClosure = sql`(CASE ${notes.entity}
  WHEN 'closure' THEN ${notes.entityId}
  WHEN 'splice' THEN (SELECT s.closure_id FROM splices s WHERE s.id = ${notes.entityId}) END)`

/** Every synced table, in the order rows of one change sequence value are listed. */
export const sources: readonly Source[] = [
  {
    table: 'projects',
    dbTable: projects,
    serverSeq: projects.serverSeq,
    closureOf: null,
    projectOf: sql`${projects.id}`,
    select: getTableColumns(projects),
    idOf: byId,
  },
  {
    table: 'cables',
    dbTable: cables,
    serverSeq: cables.serverSeq,
    closureOf: null,
    projectOf: sql`${cables.projectId}`,
    select: getTableColumns(cables),
    idOf: byId,
  },
  {
    table: 'closures',
    dbTable: closures,
    serverSeq: closures.serverSeq,
    closureOf: sql`${closures.id}`,
    select: getTableColumns(closures),
    idOf: byId,
  },
  {
    table: 'closureAssignments',
    dbTable: closureAssignments,
    serverSeq: closureAssignments.serverSeq,
    closureOf: sql`${closureAssignments.closureId}`,
    select: getTableColumns(closureAssignments),
    // The composite key as one string, as the device stores it.
    idOf: (row) => `${row.closureId as string}:${row.userId as string}`,
    shape: (row) => ({ id: `${row.closureId as string}:${row.userId as string}`, ...row }),
  },
  {
    table: 'trays',
    dbTable: trays,
    serverSeq: trays.serverSeq,
    closureOf: sql`${trays.closureId}`,
    select: getTableColumns(trays),
    idOf: byId,
  },
  {
    table: 'planRows',
    dbTable: planRows,
    serverSeq: planRows.serverSeq,
    closureOf: sql`${planRows.closureId}`,
    select: getTableColumns(planRows),
    idOf: byId,
  },
  {
    table: 'splices',
    dbTable: splices,
    serverSeq: splices.serverSeq,
    closureOf: sql`${splices.closureId}`,
    select: getTableColumns(splices),
    idOf: byId,
  },
  {
    table: 'photoLinks',
    dbTable: photoLinks,
    serverSeq: photoLinks.serverSeq,
    closureOf: photoClosure,
    select: {
      ...getTableColumns(photoLinks),
      // A link may name a photo not uploaded yet; an upload re-stamps its links so devices hear of it.
      missing: sql<number>`NOT EXISTS (SELECT 1 FROM photos p WHERE p.sha256 = ${photoLinks.sha256})`,
    },
    idOf: byId,
    shape: (row) => ({ ...row, missing: row.missing === 1 || row.missing === true }),
  },
  {
    table: 'notes',
    dbTable: notes,
    serverSeq: notes.serverSeq,
    closureOf: noteClosure,
    select: getTableColumns(notes),
    idOf: byId,
  },
]

/** The SQL test that a closure row aliased `c` is in scope. */
function closureInScope(scope: PullScope): SQL {
  switch (scope.kind) {
    case 'all':
      return sql`1`
    case 'signedOff':
      return sql`c.state = 'signed_off'`
    case 'crew':
      // A user without a crew sees no closures.
      return scope.crewId === null ? sql`0` : sql`c.crew_id = ${scope.crewId}`
  }
}

/** The filter keeping a source's rows the scope may see (undefined: no narrowing). */
export function visibleRows(source: Source, scope: PullScope): SQL | undefined {
  if (scope.kind === 'all') return undefined
  if (source.closureOf)
    return sql`${source.closureOf} IN (SELECT c.id FROM closures c WHERE ${closureInScope(scope)})`
  // A project and its cables are seen by whoever sees one of its live closures.
  return sql`EXISTS (SELECT 1 FROM closures c WHERE c.project_id = ${source.projectOf} AND c.deleted = 0 AND ${closureInScope(scope)})`
}

/** The change sequence values of up to `limit` visible rows after `cursor`, ascending. */
export function seqsAfter(
  conn: Conn,
  source: Source,
  scope: PullScope,
  cursor: number,
  limit: number,
): number[] {
  return dbOf(conn)
    .select({ seq: source.serverSeq })
    .from(source.dbTable)
    .where(and(gt(source.serverSeq, cursor), visibleRows(source, scope)))
    .orderBy(asc(source.serverSeq))
    .limit(limit)
    .all()
    .map((row) => row.seq as number)
}

/** Whether a visible row was written after `seq`. */
export function anyAfter(conn: Conn, source: Source, scope: PullScope, seq: number): boolean {
  return (
    dbOf(conn)
      .select({ one: sql<number>`1` })
      .from(source.dbTable)
      .where(and(gt(source.serverSeq, seq), visibleRows(source, scope)))
      .limit(1)
      .get() !== undefined
  )
}

/** One mirrored row, as a pull sends it. */
export interface ChangedRow {
  table: SyncedTable
  id: string
  serverSeq: number
  deleted: boolean
  row: Record<string, unknown>
}

function toChange(source: Source, row: Record<string, unknown>, serverSeq?: number): ChangedRow {
  const shaped = source.shape ? source.shape(row) : row
  return {
    table: source.table,
    id: source.idOf(row),
    serverSeq: serverSeq ?? (row.serverSeq as number),
    deleted: row.deleted === true,
    row: shaped,
  }
}

/** Visible rows with cursor < server_seq ≤ upTo, tombstones included. */
export function rowsBetween(
  conn: Conn,
  source: Source,
  scope: PullScope,
  cursor: number,
  upTo: number,
): ChangedRow[] {
  return (
    dbOf(conn)
      .select(source.select as never)
      .from(source.dbTable)
      .where(and(gt(source.serverSeq, cursor), lte(source.serverSeq, upTo), visibleRows(source, scope)))
      .all() as Record<string, unknown>[]
  ).map((row) => toChange(source, row))
}

/**
 * Rows of a closure (and of its project) last written at or before `cursor`: a device that only now gains
 * the closure never received them. They are sent as of `asOf`, the change that brought the closure in.
 */
export function closureSubtree(
  conn: Conn,
  closure: { id: string; projectId: string },
  cursor: number,
  asOf: number,
) {
  const changes: ChangedRow[] = []
  for (const source of sources) {
    const owner = source.closureOf
      ? sql`${source.closureOf} = ${closure.id}`
      : sql`${source.projectOf} = ${closure.projectId}`
    const rows = dbOf(conn)
      .select(source.select as never)
      .from(source.dbTable)
      .where(and(lte(source.serverSeq, cursor), owner))
      .all() as Record<string, unknown>[]
    for (const row of rows) changes.push(toChange(source, row, asOf))
  }
  return changes
}

/** The audit test that a closure's crew or state once matched (`old_value`) or now matches (`new_value`) the scope. */
function scopeHistory(scope: PullScope, column: 'old_value' | 'new_value'): SQL {
  const value = sql.raw(`a.${column}`)
  if (scope.kind === 'signedOff') return sql`a.field = 'state' AND ${value} = '"signed_off"'`
  if (scope.kind === 'crew' && scope.crewId !== null)
    return sql`a.field = 'crewId' AND ${value} = json_quote(${scope.crewId})`
  return sql`0`
}

function closureHistory(scope: PullScope, column: 'old_value' | 'new_value'): SQL {
  return sql`EXISTS (SELECT 1 FROM audit_log a
    WHERE a.entity = 'closure' AND a.entity_id = ${closures.id} AND ${scopeHistory(scope, column)})`
}

/**
 * Closures written after `cursor` that the scope sees no longer but did once (another crew's now, or
 * reopened for an inspector): the device is told to drop them with a tombstone.
 */
export function departedClosures(
  conn: Conn,
  scope: PullScope,
  cursor: number,
  upTo: number | null,
  limit?: number,
) {
  if (scope.kind === 'all' || cursor === 0) return []
  const query = dbOf(conn)
    .select({ id: closures.id, serverSeq: closures.serverSeq })
    .from(closures)
    .where(
      and(
        gt(closures.serverSeq, cursor),
        upTo === null ? undefined : lte(closures.serverSeq, upTo),
        sql`NOT (${visibleRows(sources[2]!, scope)})`,
        closureHistory(scope, 'old_value'),
      ),
    )
    .orderBy(asc(closures.serverSeq))
  return limit === undefined ? query.all() : query.limit(limit).all()
}

/** Visible closures written after `cursor` that came into the scope through a crew or sign-off change. */
export function arrivedClosures(conn: Conn, scope: PullScope, cursor: number, upTo: number) {
  if (scope.kind === 'all' || cursor === 0) return []
  return dbOf(conn)
    .select({ id: closures.id, projectId: closures.projectId, serverSeq: closures.serverSeq })
    .from(closures)
    .where(
      and(
        gt(closures.serverSeq, cursor),
        lte(closures.serverSeq, upTo),
        eq(closures.deleted, false),
        visibleRows(sources[2]!, scope),
        closureHistory(scope, 'new_value'),
      ),
    )
    .all()
}

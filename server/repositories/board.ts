import type BetterSqlite3 from 'better-sqlite3'
import { type Conn, rawSqlite, type Sqlite } from '#db/client'
import { closureStates, type ClosureKind, type ClosureState } from '#shared/schemas/enums'
import {
  completionBands,
  lossBinCount,
  lossBinWidthDb,
  type BoardSummary,
  type CompletionBand,
} from '#shared/schemas/projectBoard'

export const boardSorts = ['label', 'completion', 'overTarget', 'lastActivity', 'routePosition'] as const
export type BoardSort = (typeof boardSorts)[number]

export interface BoardQuery {
  limit: number
  offset: number
  sort: BoardSort
  dir: 'asc' | 'desc'
  state?: ClosureState
  crewId?: string
  /** Part of the closure label, case-insensitive. */
  q?: string
}

/** A closure's maintained roll-up, as closure_totals holds it. */
export interface ClosureTotals {
  planned: number
  logged: number
  offPlan: number
  lossCount: number
  lossSum: number
  lossMax: number | null
  lossMean: number | null
  overTarget: number
  overMaximum: number
  resplices: number
  mismatches: number
  photos: number
  lastActivityAt: string | null
  completionPct: number
}

export interface ClosureRollup extends ClosureTotals {
  closureId: string
  projectId: string
}

export interface BoardItem extends ClosureTotals {
  id: string
  projectId: string
  label: string
  kind: ClosureKind
  lat: number | null
  lon: number | null
  routePositionM: number | null
  roadside: boolean
  crewId: string | null
  state: ClosureState
  signedOffBy: string | null
  signedOffAt: string | null
  serverSeq: number
}

interface TotalsColumns {
  planned: number
  logged: number
  off_plan: number
  loss_count: number
  loss_sum: number
  loss_max: number | null
  over_target: number
  over_maximum: number
  resplices: number
  mismatches: number
  photos: number
  last_activity_at: string | null
  completion_pct: number
}

interface BoardRow extends TotalsColumns {
  id: string
  project_id: string
  label: string
  kind: ClosureKind
  lat: number | null
  lon: number | null
  route_position_m: number | null
  roadside: number
  crew_id: string | null
  state: ClosureState
  signed_off_by: string | null
  signed_off_at: string | null
  server_seq: number
}

const totalsSelect =
  't.planned, t.logged, t.off_plan, t.loss_count, t.loss_sum, t.loss_max, t.over_target, t.over_maximum, ' +
  't.resplices, t.mismatches, t.photos, t.last_activity_at, t.completion_pct'

// Each sort walks an index whose tail is the closure id, so a page costs the rows on it (plus the offset),
// not a sort of the whole project.
const orderings: Record<BoardSort, { drivenBy: 'closures' | 'totals'; columns: [string, string] }> = {
  label: { drivenBy: 'closures', columns: ['c.label', 'c.id'] },
  routePosition: { drivenBy: 'closures', columns: ['c.route_position_m', 'c.id'] },
  completion: { drivenBy: 'totals', columns: ['t.completion_pct', 't.closure_id'] },
  overTarget: { drivenBy: 'totals', columns: ['t.over_target', 't.closure_id'] },
  lastActivity: { drivenBy: 'totals', columns: ['t.last_activity_at', 't.closure_id'] },
}

function filters(query: Pick<BoardQuery, 'state' | 'crewId' | 'q'>): string {
  let where = 'c.deleted = 0'
  if (query.state !== undefined) where += ' AND c.state = @state'
  if (query.crewId !== undefined) where += ' AND c.crew_id = @crewId'
  if (query.q !== undefined && query.q !== '') where += " AND c.label LIKE @q ESCAPE '\\'"
  return where
}

function pageSql(query: BoardQuery): string {
  const { drivenBy, columns } = orderings[query.sort]
  const dir = query.dir === 'desc' ? 'DESC' : 'ASC'
  // CROSS JOIN fixes the loop order in SQLite: the table whose index gives the order goes outside.
  const from =
    drivenBy === 'closures'
      ? 'closures c CROSS JOIN closure_totals t ON t.closure_id = c.id'
      : 'closure_totals t CROSS JOIN closures c ON c.id = t.closure_id'
  const project = drivenBy === 'closures' ? 'c.project_id' : 't.project_id'
  return `
    SELECT c.id, c.project_id, c.label, c.kind, c.lat, c.lon, c.route_position_m, c.roadside, c.crew_id, c.state,
      c.signed_off_by, c.signed_off_at, c.server_seq, ${totalsSelect}
    FROM ${from}
    WHERE ${project} = @projectId AND ${filters(query)}
    ORDER BY ${columns[0]} ${dir}, ${columns[1]} ${dir}
    LIMIT @limit OFFSET @offset`
}

function countSql(query: BoardQuery): string {
  return `SELECT count(*) AS n FROM closures c WHERE c.project_id = @projectId AND ${filters(query)}`
}

interface BoardStatements {
  pages: Map<string, BetterSqlite3.Statement<[Record<string, unknown>], BoardRow>>
  counts: Map<string, BetterSqlite3.Statement<[Record<string, unknown>], { n: number }>>
  rollup: BetterSqlite3.Statement<[string], TotalsColumns & { closure_id: string; project_id: string }>
}

const cache = new WeakMap<Sqlite, BoardStatements>()

function boardParams(projectId: string, query: BoardQuery): Record<string, unknown> {
  const params: Record<string, unknown> = { projectId }
  if (query.state !== undefined) params.state = query.state
  if (query.crewId !== undefined) params.crewId = query.crewId
  if (query.q) params.q = `%${escapeLike(query.q)}%`
  return params
}

function statements(sqlite: Sqlite): BoardStatements {
  let found = cache.get(sqlite)
  if (!found) {
    found = {
      pages: new Map(),
      counts: new Map(),
      rollup: sqlite.prepare(
        `SELECT t.closure_id, t.project_id, ${totalsSelect} FROM closure_totals t WHERE t.closure_id = ?`,
      ),
    }
    cache.set(sqlite, found)
  }
  return found
}

function escapeLike(text: string): string {
  return text.replace(/[\\%_]/g, (c) => `\\${c}`)
}

function totalsOf(row: TotalsColumns): ClosureTotals {
  return {
    planned: row.planned,
    logged: row.logged,
    offPlan: row.off_plan,
    lossCount: row.loss_count,
    lossSum: row.loss_sum,
    lossMax: row.loss_max,
    // loss_sum holds whole thousandths over 1000: the mean is taken in thousandths, as shared summarizeTotals
    // takes it, so the phone and the board show the same number.
    lossMean: row.loss_count > 0 ? Math.round(row.loss_sum * 1000) / row.loss_count / 1000 : null,
    overTarget: row.over_target,
    overMaximum: row.over_maximum,
    resplices: row.resplices,
    mismatches: row.mismatches,
    photos: row.photos,
    lastActivityAt: row.last_activity_at,
    completionPct: row.completion_pct,
  }
}

/** One page of a project's closure board with each closure's roll-up, read from closure_totals alone. */
export function projectBoard(
  conn: Conn,
  projectId: string,
  query: BoardQuery,
): { items: BoardItem[]; total: number } {
  const sqlite = rawSqlite(conn)
  const st = statements(sqlite)
  const filterShape = `${query.state !== undefined}|${query.crewId !== undefined}|${Boolean(query.q)}`
  const pageShape = `${query.sort}|${query.dir}|${filterShape}`
  let page = st.pages.get(pageShape)
  if (!page) {
    page = sqlite.prepare(pageSql(query))
    st.pages.set(pageShape, page)
  }
  let counter = st.counts.get(filterShape)
  if (!counter) {
    counter = sqlite.prepare(countSql(query))
    st.counts.set(filterShape, counter)
  }

  const params = boardParams(projectId, query)
  const limit = Math.max(0, Math.trunc(query.limit))
  const rows = page.all({ ...params, limit, offset: Math.max(0, Math.trunc(query.offset)) })
  const total = counter.get(params)?.n ?? 0
  return {
    total,
    items: rows.map((row) => ({
      id: row.id,
      projectId: row.project_id,
      label: row.label,
      kind: row.kind,
      lat: row.lat,
      lon: row.lon,
      routePositionM: row.route_position_m,
      roadside: row.roadside === 1,
      crewId: row.crew_id,
      state: row.state,
      signedOffBy: row.signed_off_by,
      signedOffAt: row.signed_off_at,
      serverSeq: row.server_seq,
      ...totalsOf(row),
    })),
  }
}

/** One closure's roll-up (a primary-key read), or undefined for an unknown closure. */
export function closureRollup(conn: Conn, closureId: string): ClosureRollup | undefined {
  const row = statements(rawSqlite(conn)).rollup.get(closureId)
  return row ? { closureId: row.closure_id, projectId: row.project_id, ...totalsOf(row) } : undefined
}

/** SQLite's plan for one board page, for tests and the benchmark to check that no step sorts the project. */
export function explainProjectBoard(conn: Conn, projectId: string, query: BoardQuery): string[] {
  const rows = rawSqlite(conn)
    .prepare(`EXPLAIN QUERY PLAN ${pageSql(query)}`)
    .all({ ...boardParams(projectId, query), limit: query.limit, offset: query.offset }) as Array<{
    detail: string
  }>
  return rows.map((row) => row.detail)
}

interface SummaryRow {
  state: ClosureState
  band: CompletionBand
  bin: number | null
  closures: number
  planned: number
  logged: number
  over_target: number
}

const summaryStatements = new WeakMap<
  Sqlite,
  Map<string, BetterSqlite3.Statement<[Record<string, unknown>], SummaryRow>>
>()

// Means are taken in thousandths, as totalsOf takes them, so a closure falls in the bar its board row shows.
function summarySql(query: Pick<BoardQuery, 'state' | 'crewId' | 'q'>): string {
  const milliMean = 'round(t.loss_sum * 1000) * 1.0 / t.loss_count'
  return `
    SELECT c.state AS state,
      CASE WHEN t.planned = 0 THEN 'no_plan' WHEN t.logged = 0 THEN '0'
           WHEN t.logged * 2 < t.planned THEN '1-49' WHEN t.logged < t.planned THEN '50-99' ELSE '100' END AS band,
      CASE WHEN t.loss_count = 0 THEN NULL
           ELSE min(${lossBinCount}, max(0, CAST(${milliMean} / ${Math.round(lossBinWidthDb * 1000)} AS INTEGER))) END AS bin,
      count(*) AS closures, sum(t.planned) AS planned, sum(t.logged) AS logged, sum(t.over_target) AS over_target
    FROM closures c JOIN closure_totals t ON t.closure_id = c.id
    WHERE c.project_id = @projectId AND ${filters(query)}
    GROUP BY 1, 2, 3`
}

/** The roll-up of every closure the filters match: counts per state and completion band, closures binned by mean loss. */
export function projectBoardSummary(
  conn: Conn,
  projectId: string,
  query: Pick<BoardQuery, 'state' | 'crewId' | 'q'>,
): BoardSummary {
  const sqlite = rawSqlite(conn)
  let byShape = summaryStatements.get(sqlite)
  if (!byShape) {
    byShape = new Map()
    summaryStatements.set(sqlite, byShape)
  }
  const shape = `${query.state !== undefined}|${query.crewId !== undefined}|${Boolean(query.q)}`
  let statement = byShape.get(shape)
  if (!statement) {
    statement = sqlite.prepare(summarySql(query))
    byShape.set(shape, statement)
  }
  const summary: BoardSummary = {
    closures: 0,
    planned: 0,
    logged: 0,
    overTarget: 0,
    byState: Object.fromEntries(closureStates.map((s) => [s, 0])) as BoardSummary['byState'],
    byCompletion: Object.fromEntries(completionBands.map((b) => [b, 0])) as BoardSummary['byCompletion'],
    meanLossBins: Array.from({ length: lossBinCount + 1 }, () => 0),
    noLoss: 0,
  }
  for (const row of statement.all(
    boardParams(projectId, { ...query, limit: 0, offset: 0, sort: 'label', dir: 'asc' }),
  )) {
    summary.closures += row.closures
    summary.planned += row.planned
    summary.logged += row.logged
    summary.overTarget += row.over_target
    summary.byState[row.state] += row.closures
    summary.byCompletion[row.band] += row.closures
    if (row.bin === null) summary.noLoss += row.closures
    else summary.meanLossBins[row.bin] = (summary.meanLossBins[row.bin] ?? 0) + row.closures
  }
  return summary
}

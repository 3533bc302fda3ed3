import { createHash } from 'node:crypto'
import { v7 as uuidv7 } from 'uuid'
import { writeTransaction, type Sqlite } from '#db/client'
import { locateOnPath, traceFiberPath } from '#shared/domain/fiberPath'
import { distanceFromAM, matchEvents, spliceMeasurement } from '#shared/domain/otdr'
import { otdrImportBodySchema, type OtdrImportResult, type OtdrRowProblem } from '#shared/schemas/otdr'
import type { AppContext } from '../context'
import { AppError } from '../errors'
import type { Actor } from '../middleware/auth'
import { recordEvent } from '../repositories/audit'
import { loadProjectPlant, type ProjectPlant } from '../repositories/otdr'
import { readOtdrCsv, type CsvRowRead } from './otdrCsv'
import { getProject } from './projects'

interface TraceDraft {
  cableId: string
  fiber: number
  direction: 'a_to_b' | 'b_to_a'
  wavelengthNm: number
  fiberLengthM: number
  endToEndDb: number | null
  rows: CsvRowRead[]
}

/** Groups a file's rows into traces by cable, fiber, end and wavelength; rows naming unknown cables or disagreeing trace fields are problems. */
function tracesOf(fileName: string, rows: CsvRowRead[], plant: ProjectPlant, problems: OtdrRowProblem[]) {
  const traces = new Map<string, TraceDraft>()
  for (const read of rows) {
    const v = read.value
    const cable = plant.cableByLabel.get(v.cable.trim().toLowerCase())
    if (!cable) {
      problems.push({
        file: fileName,
        row: read.row,
        field: 'cable',
        message: `No cable "${v.cable}" in this project.`,
      })
      continue
    }
    if (v.fiber > cable.fiberCount) {
      problems.push({
        file: fileName,
        row: read.row,
        field: 'fiber',
        message: `${cable.label} has ${cable.fiberCount} fibers.`,
      })
      continue
    }
    const direction = v.from_end === 'A' ? 'a_to_b' : 'b_to_a'
    const key = `${cable.id}#${v.fiber}#${direction}#${v.wavelength_nm}`
    const held = traces.get(key)
    if (!held) {
      traces.set(key, {
        cableId: cable.id,
        fiber: v.fiber,
        direction,
        wavelengthNm: v.wavelength_nm,
        fiberLengthM: v.fiber_length_m,
        endToEndDb: v.end_to_end_db,
        rows: [read],
      })
      continue
    }
    if (held.fiberLengthM !== v.fiber_length_m || held.endToEndDb !== v.end_to_end_db) {
      problems.push({
        file: fileName,
        row: read.row,
        field: 'fiber_length_m',
        message: 'The fiber length and end-to-end loss must be the same on every row of one trace.',
      })
      continue
    }
    held.rows.push(read)
  }
  return [...traces.values()]
}

/** Imports OTDR CSV files: all of them or, when any row is bad, none; a file imported before changes nothing. */

/** The file's text as compared between imports: no leading byte-order mark, LF line endings. */
function sameText(text: string): string {
  return text.replace(/^\uFEFF/, '').replace(/\r\n?/g, '\n')
}
export function importOtdrFiles(
  ctx: AppContext,
  actor: Actor,
  projectId: unknown,
  body: unknown,
): { status: number; result: OtdrImportResult } {
  const project = getProject(ctx, actor, projectId)
  return importOtdrIntoProject(ctx.database.sqlite, actor.id, project, body)
}

export interface OtdrImportOptions {
  /** The import's time; now unless given (the demo seed gives its own clock). */
  at?: string
  /** Makes row ids; UUIDv7 unless given (the demo seed gives its fixed generator). */
  newId?: () => string
}

/** The import itself, for a project already checked: the route above and the demo seed both go through it. */
export function importOtdrIntoProject(
  sqlite: Sqlite,
  actorId: string,
  project: { id: string; otdrToleranceM: number },
  body: unknown,
  options: OtdrImportOptions = {},
): { status: number; result: OtdrImportResult } {
  const input = otdrImportBodySchema.parse(body)
  const newId = options.newId ?? uuidv7
  const plant = loadProjectPlant(sqlite, project.id)
  const problems: OtdrRowProblem[] = []
  const seen = new Map<string, string>()
  const files = input.files.map((file) => {
    // The same table saved again elsewhere (a BOM, other line endings) is the same import.
    const sha256 = createHash('sha256').update(sameText(file.text)).digest('hex')
    const before = sqlite
      .prepare(
        'SELECT id, trace_count AS traces, event_count AS events FROM otdr_imports WHERE project_id = ? AND sha256 = ?',
      )
      .get(project.id, sha256) as { id: string; traces: number; events: number } | undefined
    if (before || seen.has(sha256))
      return { file, sha256, before: before ?? null, traces: [] as TraceDraft[] }
    seen.set(sha256, file.name)
    const read = readOtdrCsv(file.name, file.text)
    problems.push(...read.problems)
    return { file, sha256, before: null, traces: tracesOf(file.name, read.rows, plant, problems) }
  })
  if (problems.length) {
    throw new AppError(
      'invalid_otdr_csv',
      `${problems.length} row problem${problems.length === 1 ? '' : 's'} in the files; nothing was imported.`,
      400,
      problems,
    )
  }
  const at = options.at ?? new Date().toISOString()
  let imported = 0
  const store = () => {
    const touched = new Set<string>()
    const out: OtdrImportResult['files'] = files.map(({ file, sha256, before, traces }) => {
      if (before || traces.length === 0) {
        const held =
          before ??
          (sqlite
            .prepare(
              'SELECT id, trace_count AS traces, event_count AS events FROM otdr_imports WHERE project_id = ? AND sha256 = ?',
            )
            .get(project.id, sha256) as { id: string; traces: number; events: number })
        return {
          name: file.name,
          sha256,
          status: 'unchanged' as const,
          importId: held.id,
          traces: held.traces,
          events: held.events,
          unmatched: 0,
        }
      }
      imported += 1
      const importId = newId()
      const events = traces.reduce((n, t) => n + t.rows.filter((r) => r.value.distance_m !== null).length, 0)
      sqlite
        .prepare(
          'INSERT INTO otdr_imports (id, project_id, file_name, sha256, imported_by, imported_at, trace_count, event_count) VALUES (?, ?, ?, ?, ?, ?, ?, ?)',
        )
        .run(importId, project.id, file.name, sha256, actorId, at, traces.length, events)
      let unmatched = 0
      for (const trace of traces)
        unmatched += storeTrace(sqlite, plant, project, importId, trace, touched, newId)
      recordEvent(sqlite, { userId: actorId, entity: 'otdr_import', entityId: importId, at }, 'created', {
        fileName: file.name,
        sha256,
      })
      return {
        name: file.name,
        sha256,
        status: 'imported' as const,
        importId,
        traces: traces.length,
        events,
        unmatched,
      }
    })
    for (const key of touched) {
      const [spliceId, wavelength] = key.split('|') as [string, string]
      reconcileSplice(sqlite, plant, spliceId, Number(wavelength), at)
    }
    return { files: out }
  }
  // OTDR rows never sync, so they need no change sequence value: inside a caller's transaction (the demo seed,
  // which stamps its whole scenario with one value) the import joins it instead of taking a value of its own.
  const result = sqlite.inTransaction ? store() : writeTransaction(sqlite, store)
  return { status: imported ? 201 : 200, result }
}

function storeTrace(
  sqlite: Sqlite,
  plant: ProjectPlant,
  project: { id: string; otdrToleranceM: number },
  importId: string,
  trace: TraceDraft,
  touched: Set<string>,
  newId: () => string,
): number {
  const path = traceFiberPath(plant.graph, { cableId: trace.cableId, fiber: trace.fiber })
  const first = path.segments[0] ?? { cableId: trace.cableId, fiber: trace.fiber }
  const traceId = newId()
  sqlite
    .prepare(
      `INSERT INTO otdr_traces (id, import_id, project_id, cable_id, fiber, direction, wavelength_nm, fiber_length_m, end_to_end_db, path_cable_id, path_fiber)
       VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
    )
    .run(
      traceId,
      importId,
      project.id,
      trace.cableId,
      trace.fiber,
      trace.direction,
      trace.wavelengthNm,
      trace.fiberLengthM,
      trace.endToEndDb,
      first.cableId,
      first.fiber,
    )
  const rows = trace.rows.filter((r) => r.value.distance_m !== null && r.value.kind !== null)
  const events = rows.map((r) => ({
    atM: distanceFromAM(trace.direction, trace.fiberLengthM, r.value.distance_m as number),
    kind: r.value.kind as NonNullable<typeof r.value.kind>,
  }))
  const matches = matchEvents(events, path.joins, path.lengthM, project.otdrToleranceM)
  const insert = sqlite.prepare(
    `INSERT INTO otdr_events (id, trace_id, row, distance_m, from_a_m, loss_db, reflectance_db, kind, match, splice_id, closure_id, route_position_m, after_closure_id, before_closure_id, on_cable_id)
     VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
  )
  let unmatched = 0
  rows.forEach((r, i) => {
    const match = matches[i]!
    const event = events[i]!
    const where =
      match.kind === 'unmatched' ? locateOnPath(plant.graph, path, event.atM, plant.closuresOfCable) : null
    if (match.kind === 'unmatched') unmatched += 1
    const spliceId = match.kind === 'join' ? match.joinId : null
    if (spliceId) touched.add(`${spliceId}|${trace.wavelengthNm}`)
    insert.run(
      newId(),
      traceId,
      r.row,
      r.value.distance_m,
      event.atM,
      r.value.loss_db,
      r.value.reflectance_db,
      event.kind,
      match.kind,
      spliceId,
      match.kind === 'join' || match.kind === 'duplicate' ? match.closureId : null,
      where?.routePositionM ?? null,
      where?.after?.id ?? null,
      where?.before?.id ?? null,
      where?.cableId ?? null,
    )
  })
  return unmatched
}

/** Re-pairs one splice at one wavelength from the newest matched reading in each direction. */
function reconcileSplice(
  sqlite: Sqlite,
  plant: ProjectPlant,
  spliceId: string,
  wavelengthNm: number,
  at: string,
): void {
  const newest = (direction: string) =>
    sqlite
      .prepare(
        `SELECT e.id, e.loss_db AS lossDb FROM otdr_events e JOIN otdr_traces t ON t.id = e.trace_id JOIN otdr_imports i ON i.id = t.import_id
          WHERE e.splice_id = ? AND e.match = 'join' AND t.wavelength_nm = ? AND t.direction = ?
          ORDER BY i.imported_at DESC, t.id DESC LIMIT 1`,
      )
      .get(spliceId, wavelengthNm, direction) as { id: string; lossDb: number } | undefined
  const ab = newest('a_to_b')
  const ba = newest('b_to_a')
  const result = spliceMeasurement(ab?.lossDb ?? null, ba?.lossDb ?? null)
  if (result.kind === 'no_reading') return
  sqlite
    .prepare(
      `INSERT INTO otdr_splice_results (splice_id, wavelength_nm, closure_id, ab_db, ba_db, kind, average_db, ab_event_id, ba_event_id, updated_at)
       VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)
       ON CONFLICT (splice_id, wavelength_nm) DO UPDATE SET ab_db = excluded.ab_db, ba_db = excluded.ba_db, kind = excluded.kind,
         average_db = excluded.average_db, ab_event_id = excluded.ab_event_id, ba_event_id = excluded.ba_event_id, updated_at = excluded.updated_at`,
    )
    .run(
      spliceId,
      wavelengthNm,
      plant.splices.get(spliceId)!.closureId,
      ab?.lossDb ?? null,
      ba?.lossDb ?? null,
      result.kind,
      result.kind === 'average' ? result.lossDb : null,
      ab?.id ?? null,
      ba?.id ?? null,
      at,
    )
}

import { type Conn, rawSqlite } from '#db/client'
import type { CableLayout } from '#shared/domain/colour'

/** One splice attempt as the exports and the close-out report read it, with both cables' layouts. */
export interface SheetSplice {
  id: string
  closureId: string
  closureLabel: string
  trayNumber: number
  slot: number
  cableA: { label: string; layout: CableLayout }
  fiberA: number
  cableB: { label: string; layout: CableLayout }
  fiberB: number
  method: string
  lossDb: number | null
  attempt: number
  isCurrent: boolean
  respliceReason: string | null
  acceptReason: string | null
  reviewState: string | null
  flags: string[]
  splicerName: string
  splicedAt: string
  notes: string
}

export interface SpliceSheetFilter {
  projectId?: string
  closureId?: string
  /** A UTC day (YYYY-MM-DD) of the device time the splice was made. */
  day?: string
  /** SQL narrowing the closures table `c` to the reader's scope, with its parameters. */
  scope?: { sql: string; params: unknown[] }
}

interface Row {
  id: string
  closure_id: string
  closure_label: string
  tray_number: number
  slot: number
  fiber_a: number
  fiber_b: number
  method: string
  loss_db: number | null
  attempt: number
  is_current: number
  resplice_reason: string | null
  accept_reason: string | null
  review_state: string | null
  flags: string
  splicer_name: string
  spliced_at: string
  notes: string
  a_label: string
  a_count: number
  a_construction: CableLayout['construction']
  a_per_unit: number
  a_unit_counts: string | null
  a_ribbons: number | null
  a_scheme: CableLayout['colourScheme']
  b_label: string
  b_count: number
  b_construction: CableLayout['construction']
  b_per_unit: number
  b_unit_counts: string | null
  b_ribbons: number | null
  b_scheme: CableLayout['colourScheme']
}

const cableColumns = (alias: string) =>
  [
    'label',
    'fiber_count AS count',
    'construction',
    'fibers_per_unit AS per_unit',
    'unit_counts',
    'ribbons_per_tube AS ribbons',
    'colour_scheme AS scheme',
  ]
    .map((col) => {
      const [name, as] = col.split(' AS ')
      return `${alias}.${name} AS ${alias}_${as ?? name}`
    })
    .join(', ')

function layoutOf(row: Row, side: 'a' | 'b'): { label: string; layout: CableLayout } {
  const unitCounts = row[`${side}_unit_counts`]
  return {
    label: row[`${side}_label`],
    layout: {
      fiberCount: row[`${side}_count`],
      construction: row[`${side}_construction`],
      fibersPerUnit: row[`${side}_per_unit`],
      unitCounts: unitCounts ? (JSON.parse(unitCounts) as number[]) : null,
      ribbonsPerTube: row[`${side}_ribbons`],
      colourScheme: row[`${side}_scheme`],
    },
  }
}

/** Every live splice attempt matching the filter, ordered by closure, tray, slot and attempt. */
export function listSheetSplices(conn: Conn, filter: SpliceSheetFilter): SheetSplice[] {
  const where = ['s.deleted = 0', 'c.deleted = 0']
  const params: unknown[] = []
  if (filter.projectId) {
    where.push('c.project_id = ?')
    params.push(filter.projectId)
  }
  if (filter.closureId) {
    where.push('s.closure_id = ?')
    params.push(filter.closureId)
  }
  if (filter.day) {
    where.push('substr(s.spliced_at, 1, 10) = ?')
    params.push(filter.day)
  }
  if (filter.scope) {
    where.push(filter.scope.sql)
    params.push(...filter.scope.params)
  }
  const rows = rawSqlite(conn)
    .prepare(
      `SELECT s.id, s.closure_id, c.label AS closure_label, t.number AS tray_number, s.slot, s.fiber_a, s.fiber_b,
              s.method, s.loss_db, s.attempt, s.is_current, s.resplice_reason, s.accept_reason, s.review_state,
              s.flags, u.name AS splicer_name, s.spliced_at, s.notes, ${cableColumns('a')}, ${cableColumns('b')}
         FROM splices s
         JOIN closures c ON c.id = s.closure_id
         JOIN trays t ON t.id = s.tray_id
         JOIN cables a ON a.id = s.cable_a_id
         JOIN cables b ON b.id = s.cable_b_id
         JOIN users u ON u.id = s.splicer_id
        WHERE ${where.join(' AND ')}
        ORDER BY c.label, c.id, t.number, s.slot, s.attempt, s.id`,
    )
    .all(...params) as Row[]
  return rows.map((row) => ({
    id: row.id,
    closureId: row.closure_id,
    closureLabel: row.closure_label,
    trayNumber: row.tray_number,
    slot: row.slot,
    cableA: layoutOf(row, 'a'),
    fiberA: row.fiber_a,
    cableB: layoutOf(row, 'b'),
    fiberB: row.fiber_b,
    method: row.method,
    lossDb: row.loss_db,
    attempt: row.attempt,
    isCurrent: row.is_current === 1,
    respliceReason: row.resplice_reason,
    acceptReason: row.accept_reason,
    reviewState: row.review_state,
    flags: JSON.parse(row.flags) as string[],
    splicerName: row.splicer_name,
    splicedAt: row.spliced_at,
    notes: row.notes,
  }))
}

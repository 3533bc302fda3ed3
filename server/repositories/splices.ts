import type BetterSqlite3 from 'better-sqlite3'
import { type Conn, rawSqlite, type Sqlite } from '#db/client'
import type { photoLinks, splices } from '#db/schema/index'
import type { ProjectLimits } from '#shared/schemas/project'

// dB values carry three decimals: 0.100 against a 0.10 target is on target, 0.101 is over.
const LOSS_EPSILON_DB = 5e-4

/** What the caller supplies for a new splice; the server owns server_seq, is_current and the tombstone. */
export type SpliceInput = Omit<
  typeof splices.$inferInsert,
  'serverSeq' | 'isCurrent' | 'deleted' | 'createdAt'
> & {
  createdAt?: string
}

export type PhotoLinkInput = Omit<typeof photoLinks.$inferInsert, 'serverSeq' | 'deleted' | 'createdAt'> & {
  createdAt?: string
}

export interface InsertSpliceResult {
  /** The attempt this splice replaced, if any. */
  supersededId: string | null
  /** False when that attempt had already been replaced by another (two re-splices of one attempt). */
  supersededWasCurrent: boolean
}

export class SpliceWriteError extends Error {
  override name = 'SpliceWriteError'
  constructor(
    readonly code: 'supersedes_unknown' | 'supersedes_other_closure',
    message: string,
  ) {
    super(message)
  }
}

interface PairRow {
  cable_a_id: string
  fiber_a: number
  cable_b_id: string
  fiber_b: number
}

interface SupersededRow extends PairRow {
  id: string
  closure_id: string
  tray_id: string
  slot: number
  loss_db: number | null
  is_current: number
  deleted: number
}

interface SlotState {
  logged: number
  offPlan: number
  mismatches: number
}

const recomputeColumns =
  'planned, logged, off_plan, loss_count, loss_sum, loss_max, over_target, over_maximum, resplices, mismatches, ' +
  'photos, last_activity_at'

/**
 * The full roll-up from rows, as one set-based statement; `scope` picks the closures. Same rules as the
 * incremental path in insertSplice, which the property test holds it to.
 */
function recomputeSql(scope: 'closure' | 'project'): string {
  const inScope = (column: string) =>
    scope === 'closure'
      ? `${column} = @scopeId`
      : `${column} IN (SELECT id FROM closures WHERE project_id = @scopeId)`
  // Either orientation: which side the splicer called A does not change the joint (shared samePair).
  const matches =
    '((pr.cable_a_id = x.cable_a_id AND pr.fiber_a = x.fiber_a AND pr.cable_b_id = x.cable_b_id AND pr.fiber_b = x.fiber_b)' +
    ' OR (pr.cable_a_id = x.cable_b_id AND pr.fiber_a = x.fiber_b AND pr.cable_b_id = x.cable_a_id AND pr.fiber_b = x.fiber_a))'
  const updates = recomputeColumns
    .split(', ')
    .map((column) => `${column} = excluded.${column}`)
    .join(', ')
  return `
    INSERT INTO closure_totals (closure_id, project_id, ${recomputeColumns})
    SELECT c.id, c.project_id, coalesce(p.planned, 0), coalesce(p.logged, 0), coalesce(s.off_plan, 0),
      coalesce(s.loss_count, 0), round(coalesce(s.loss_sum, 0), 6), s.loss_max, coalesce(s.over_target, 0),
      coalesce(s.over_maximum, 0), coalesce(a.resplices, 0), coalesce(s.mismatches, 0), coalesce(s.photos, 0),
      a.last_activity_at
    FROM closures c
    LEFT JOIN (
      SELECT pr.closure_id, count(*) AS planned,
        sum(EXISTS (SELECT 1 FROM splices x
          WHERE x.closure_id = pr.closure_id AND x.tray_id = pr.tray_id AND x.slot = pr.slot
            AND x.is_current = 1 AND x.deleted = 0 AND ${matches})) AS logged
      FROM plan_rows pr
      WHERE pr.deleted = 0 AND ${inScope('pr.closure_id')}
      GROUP BY pr.closure_id
    ) p ON p.closure_id = c.id
    LEFT JOIN (
      SELECT x.closure_id,
        sum(pr.id IS NULL OR NOT (${matches})) AS off_plan,
        sum(pr.id IS NOT NULL AND NOT (${matches})) AS mismatches,
        count(x.loss_db) AS loss_count, sum(x.loss_db) AS loss_sum, max(x.loss_db) AS loss_max,
        sum(x.loss_db > @overTarget) AS over_target, sum(x.loss_db > @overMaximum) AS over_maximum,
        sum(EXISTS (SELECT 1 FROM photo_links l
          WHERE l.entity = 'splice' AND l.entity_id = x.id AND l.deleted = 0)) AS photos
      FROM splices x
      LEFT JOIN plan_rows pr
        ON pr.tray_id = x.tray_id AND pr.slot = x.slot AND pr.closure_id = x.closure_id AND pr.deleted = 0
      WHERE x.is_current = 1 AND x.deleted = 0 AND ${inScope('x.closure_id')}
      GROUP BY x.closure_id
    ) s ON s.closure_id = c.id
    LEFT JOIN (
      SELECT closure_id, sum(is_current = 0) AS resplices, max(created_at) AS last_activity_at
      FROM splices
      WHERE deleted = 0 AND ${inScope('closure_id')}
      GROUP BY closure_id
    ) a ON a.closure_id = c.id
    WHERE ${scope === 'closure' ? 'c.id' : 'c.project_id'} = @scopeId
    ON CONFLICT (closure_id) DO UPDATE SET project_id = excluded.project_id, ${updates}`
}

type Statement<P extends unknown[] = unknown[], R = unknown> = BetterSqlite3.Statement<P, R>

interface Statements {
  supersededRow: Statement<[string], SupersededRow>
  markSuperseded: Statement<[number, string]>
  insert: Statement<[Record<string, unknown>]>
  planAtSlot: Statement<[string, number, string], PairRow>
  currentAtSlot: Statement<[string, string, number], PairRow & { id: string }>
  addToTotals: Statement<[Record<string, unknown>]>
  hasPhoto: Statement<[string], { has: number }>
  spliceForPhoto: Statement<[string], { closure_id: string; is_current: number; deleted: number }>
  insertPhotoLink: Statement<[Record<string, unknown>]>
  bumpPhotos: Statement<[string]>
  recomputeClosure: Statement<[{ scopeId: string; overTarget: number; overMaximum: number }]>
  recomputeProject: Statement<[{ scopeId: string; overTarget: number; overMaximum: number }]>
  projectLimits: Statement<[string], { limits: string }>
}

const cache = new WeakMap<Sqlite, Statements>()

// Prepared once per connection: the write path runs for every pushed splice.
function statements(sqlite: Sqlite): Statements {
  const found = cache.get(sqlite)
  if (found) return found
  const made: Statements = {
    supersededRow: sqlite.prepare(
      `SELECT id, closure_id, tray_id, slot, cable_a_id, fiber_a, cable_b_id, fiber_b, loss_db, is_current, deleted
       FROM splices WHERE id = ?`,
    ),
    markSuperseded: sqlite.prepare('UPDATE splices SET is_current = 0, server_seq = ? WHERE id = ?'),
    insert: sqlite.prepare(
      `INSERT INTO splices (id, closure_id, tray_id, slot, cable_a_id, fiber_a, cable_b_id, fiber_b, method, loss_db,
         attempt, resplice_reason, resplice_note, supersedes_id, accept_reason, notes, spliced_at, splicer_id,
         client_id, is_current, flags, review_state, created_at, server_seq, deleted)
       VALUES (@id, @closureId, @trayId, @slot, @cableAId, @fiberA, @cableBId, @fiberB, @method, @lossDb,
         @attempt, @respliceReason, @respliceNote, @supersedesId, @acceptReason, @notes, @splicedAt, @splicerId,
         @clientId, 1, @flags, @reviewState, @createdAt, @serverSeq, 0)`,
    ),
    planAtSlot: sqlite.prepare(
      `SELECT cable_a_id, fiber_a, cable_b_id, fiber_b FROM plan_rows
       WHERE tray_id = ? AND slot = ? AND closure_id = ? AND deleted = 0`,
    ),
    currentAtSlot: sqlite.prepare(
      `SELECT id, cable_a_id, fiber_a, cable_b_id, fiber_b FROM splices
       WHERE closure_id = ? AND tray_id = ? AND slot = ? AND is_current = 1 AND deleted = 0`,
    ),
    // Deltas, so the row is never read first. When the worst current splice was just replaced, the partial
    // index finds the closure's new worst (the subquery sees this transaction's writes).
    addToTotals: sqlite.prepare(
      `UPDATE closure_totals SET
         logged = logged + @logged, off_plan = off_plan + @offPlan, mismatches = mismatches + @mismatches,
         loss_count = loss_count + @lossCount, loss_sum = round(loss_sum + @lossSum, 6),
         over_target = over_target + @overTarget, over_maximum = over_maximum + @overMaximum,
         resplices = resplices + @resplices, photos = photos + @photos,
         loss_max = CASE
           WHEN @oldLoss IS NOT NULL AND loss_max IS NOT NULL AND @oldLoss >= loss_max THEN
             (SELECT max(loss_db) FROM splices WHERE closure_id = @closureId AND is_current = 1 AND deleted = 0)
           WHEN @newLoss IS NOT NULL AND (loss_max IS NULL OR @newLoss > loss_max) THEN @newLoss
           ELSE loss_max END,
         last_activity_at = CASE
           WHEN last_activity_at IS NULL OR @createdAt > last_activity_at THEN @createdAt
           ELSE last_activity_at END
       WHERE closure_id = @closureId`,
    ),
    hasPhoto: sqlite.prepare(
      `SELECT EXISTS (SELECT 1 FROM photo_links WHERE entity = 'splice' AND entity_id = ? AND deleted = 0) AS has`,
    ),
    spliceForPhoto: sqlite.prepare('SELECT closure_id, is_current, deleted FROM splices WHERE id = ?'),
    insertPhotoLink: sqlite.prepare(
      `INSERT INTO photo_links (id, sha256, entity, entity_id, added_by, created_at, server_seq, deleted)
       VALUES (@id, @sha256, @entity, @entityId, @addedBy, @createdAt, @serverSeq, 0)`,
    ),
    bumpPhotos: sqlite.prepare('UPDATE closure_totals SET photos = photos + 1 WHERE closure_id = ?'),
    recomputeClosure: sqlite.prepare(recomputeSql('closure')),
    recomputeProject: sqlite.prepare(recomputeSql('project')),
    projectLimits: sqlite.prepare('SELECT limits FROM projects WHERE id = ?'),
  }
  cache.set(sqlite, made)
  return made
}

function samePair(a: PairRow, b: PairRow): boolean {
  const straight =
    a.cable_a_id === b.cable_a_id &&
    a.fiber_a === b.fiber_a &&
    a.cable_b_id === b.cable_b_id &&
    a.fiber_b === b.fiber_b
  const swapped =
    a.cable_a_id === b.cable_b_id &&
    a.fiber_a === b.fiber_b &&
    a.cable_b_id === b.cable_a_id &&
    a.fiber_b === b.fiber_a
  return straight || swapped
}

/** A tray slot as the plan and the current splices see it. */
interface SlotView {
  trayId: string
  slot: number
  plan: PairRow | undefined
  current: Array<PairRow & { id: string }>
}

function readSlot(st: Statements, closureId: string, trayId: string, slot: number): SlotView {
  return {
    trayId,
    slot,
    plan: st.planAtSlot.get(trayId, slot, closureId),
    current: st.currentAtSlot.all(closureId, trayId, slot),
  }
}

function judgeSlot({ plan, current }: SlotView): SlotState {
  const offPlan = plan ? current.filter((row) => !samePair(row, plan)).length : current.length
  return {
    logged: plan && current.some((row) => samePair(row, plan)) ? 1 : 0,
    offPlan,
    mismatches: plan ? offPlan : 0,
  }
}

function sumSlots(states: SlotState[]): SlotState {
  return states.reduce(
    (sum, s) => ({
      logged: sum.logged + s.logged,
      offPlan: sum.offPlan + s.offPlan,
      mismatches: sum.mismatches + s.mismatches,
    }),
    { logged: 0, offPlan: 0, mismatches: 0 },
  )
}

function thresholds(limits: ProjectLimits) {
  return {
    overTarget: limits.estimate.contractTargetDb + LOSS_EPSILON_DB,
    overMaximum: limits.estimate.standardMaxDb + LOSS_EPSILON_DB,
  }
}

/**
 * Inserts a splice and keeps closure_totals current in the caller's transaction; a splice that supersedes
 * another makes that attempt no longer current.
 */
export function insertSplice(
  conn: Conn,
  splice: SpliceInput,
  options: { serverSeq: number; limits: ProjectLimits },
): InsertSpliceResult {
  const sqlite = rawSqlite(conn)
  const st = statements(sqlite)
  const { serverSeq, limits } = options
  const createdAt = splice.createdAt ?? new Date().toISOString()
  const lossDb = splice.lossDb ?? null

  let old: SupersededRow | undefined
  if (splice.supersedesId) {
    old = st.supersededRow.get(splice.supersedesId)
    if (!old) throw new SpliceWriteError('supersedes_unknown', `splice ${splice.supersedesId} does not exist`)
    if (old.closure_id !== splice.closureId) {
      throw new SpliceWriteError('supersedes_other_closure', `splice ${old.id} belongs to another closure`)
    }
  }
  // Only a current, live attempt counts in the totals; replacing one that was already replaced changes nothing.
  const counted = old !== undefined && old.is_current === 1 && old.deleted === 0 ? old : undefined

  // A re-splice usually stays in its slot, but the old attempt's slot is re-judged either way.
  const views = [readSlot(st, splice.closureId, splice.trayId, splice.slot)]
  if (old && (old.tray_id !== splice.trayId || old.slot !== splice.slot)) {
    views.push(readSlot(st, splice.closureId, old.tray_id, old.slot))
  }
  const oldHadPhoto = counted ? st.hasPhoto.get(counted.id)?.has === 1 : false

  if (old && old.is_current === 1) st.markSuperseded.run(serverSeq, old.id)
  st.insert.run({
    id: splice.id,
    closureId: splice.closureId,
    trayId: splice.trayId,
    slot: splice.slot,
    cableAId: splice.cableAId,
    fiberA: splice.fiberA,
    cableBId: splice.cableBId,
    fiberB: splice.fiberB,
    method: splice.method,
    lossDb,
    attempt: splice.attempt ?? 1,
    respliceReason: splice.respliceReason ?? null,
    respliceNote: splice.respliceNote ?? null,
    supersedesId: splice.supersedesId ?? null,
    acceptReason: splice.acceptReason ?? null,
    notes: splice.notes ?? '',
    splicedAt: splice.splicedAt,
    splicerId: splice.splicerId,
    clientId: splice.clientId,
    flags: JSON.stringify(splice.flags ?? []),
    reviewState: splice.reviewState ?? null,
    createdAt,
    serverSeq,
  })

  // The slots after the write, worked out from what was read before it rather than read again.
  const newRow = {
    id: splice.id,
    cable_a_id: splice.cableAId,
    fiber_a: splice.fiberA,
    cable_b_id: splice.cableBId,
    fiber_b: splice.fiberB,
  }
  const before = sumSlots(views.map(judgeSlot))
  const after = sumSlots(
    views.map((view, i) =>
      judgeSlot({
        ...view,
        current: [...view.current.filter((row) => row.id !== old?.id), ...(i === 0 ? [newRow] : [])],
      }),
    ),
  )
  const { overTarget, overMaximum } = thresholds(limits)
  const lossPart = (loss: number | null | undefined, sign: 1 | -1) =>
    loss == null
      ? { count: 0, sum: 0, target: 0, maximum: 0 }
      : {
          count: sign,
          sum: sign * loss,
          target: loss > overTarget ? sign : 0,
          maximum: loss > overMaximum ? sign : 0,
        }
  const gained = lossPart(lossDb, 1)
  const lost = lossPart(counted?.loss_db, -1)
  const changed = st.addToTotals.run({
    closureId: splice.closureId,
    logged: after.logged - before.logged,
    offPlan: after.offPlan - before.offPlan,
    mismatches: after.mismatches - before.mismatches,
    lossCount: gained.count + lost.count,
    lossSum: gained.sum + lost.sum,
    overTarget: gained.target + lost.target,
    overMaximum: gained.maximum + lost.maximum,
    resplices: counted ? 1 : 0,
    photos: (st.hasPhoto.get(splice.id)?.has === 1 ? 1 : 0) - (oldHadPhoto ? 1 : 0),
    newLoss: lossDb,
    oldLoss: counted?.loss_db ?? null,
    createdAt,
  }).changes
  // No totals row yet (the trigger makes one with every closure, so only in odd set-ups): build it from rows.
  if (changed === 0) recomputeClosureTotals(sqlite, splice.closureId, limits)
  return { supersededId: old?.id ?? null, supersededWasCurrent: old?.is_current === 1 }
}

/** Adds a photo link; a first photo on a current splice counts in its closure's totals at once. */
export function insertPhotoLink(conn: Conn, link: PhotoLinkInput, options: { serverSeq: number }): void {
  const st = statements(rawSqlite(conn))
  const target = link.entity === 'splice' ? st.spliceForPhoto.get(link.entityId) : undefined
  const firstPhoto = target !== undefined && st.hasPhoto.get(link.entityId)?.has !== 1
  st.insertPhotoLink.run({
    id: link.id,
    sha256: link.sha256,
    entity: link.entity,
    entityId: link.entityId,
    addedBy: link.addedBy,
    createdAt: link.createdAt ?? new Date().toISOString(),
    serverSeq: options.serverSeq,
  })
  if (target && firstPhoto && target.is_current === 1 && target.deleted === 0)
    st.bumpPhotos.run(target.closure_id)
}

/** Rebuilds one closure's totals from its rows (after plan, limit, edit or tombstone changes). */
export function recomputeClosureTotals(conn: Conn, closureId: string, limits: ProjectLimits): void {
  statements(rawSqlite(conn)).recomputeClosure.run({ scopeId: closureId, ...thresholds(limits) })
}

/** Rebuilds the totals of every closure in a project from rows (after a change of the project's limits). */
export function recomputeProjectTotals(conn: Conn, projectId: string, limits: ProjectLimits): void {
  statements(rawSqlite(conn)).recomputeProject.run({ scopeId: projectId, ...thresholds(limits) })
}

/** The project's loss limits as stored, or undefined for an unknown project. */
export function loadProjectLimits(conn: Conn, projectId: string): ProjectLimits | undefined {
  const row = statements(rawSqlite(conn)).projectLimits.get(projectId)
  return row ? (JSON.parse(row.limits) as ProjectLimits) : undefined
}

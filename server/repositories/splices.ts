import type BetterSqlite3 from 'better-sqlite3'
import { type Conn, rawSqlite, type Sqlite } from '#db/client'
import type { photoLinks, splices } from '#db/schema/index'
import { dbEpsilon, toMilliDb } from '#shared/domain/loss'
import { type FiberPair, samePair } from '#shared/domain/plan'
import { type RollupSplice, totalsOf } from '#shared/domain/rollup'
import type { ProjectLimits } from '#shared/schemas/project'

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

/** A splice as the roll-up judges it, read with the shared field names so shared functions take it as is. */
interface JudgedSplice extends FiberPair {
  id: string
  trayId: string
  slot: number
  lossDb: number | null
  attempt: number
  acceptReason: string | null
}

interface SupersededRow extends JudgedSplice {
  closureId: string
  isCurrent: number
  deleted: number
}

// Two records join the same fiber ends in either orientation, as shared samePair: which side the splicer called
// A does not change the joint. `y` is another table alias, or '@' for the @cableAId … @fiberB parameters.
function pairMatchSql(x: string, y: string): string {
  const [a, fa, b, fb] =
    y === '@'
      ? ['@cableAId', '@fiberA', '@cableBId', '@fiberB']
      : [`${y}.cable_a_id`, `${y}.fiber_a`, `${y}.cable_b_id`, `${y}.fiber_b`]
  return `(${pairSideSql(x, a, fa, b, fb)} OR ${pairSideSql(x, b, fb, a, fa)})`
}

// One orientation of pairMatchSql: `x` joins cable `a` fiber `fa` (as its A side) to cable `b` fiber `fb`.
function pairSideSql(x: string, a: string, fa: string, b: string, fb: string): string {
  const ends = `${x}.cable_a_id = ${a} AND ${x}.fiber_a = ${fa}`
  return `(${ends} AND ${x}.cable_b_id = ${b} AND ${x}.fiber_b = ${fb})`
}

// The @cableAId … @fiberB parameters in the orientation given, and turned round.
const asGiven = ['@cableAId', '@fiberA', '@cableBId', '@fiberB'] as const
const reversed = ['@cableBId', '@fiberB', '@cableAId', '@fiberA'] as const

// One value per unordered pair, so plan rows and splices can be grouped and joined on a single column.
function pairKeySql(x: string): string {
  const a = `${x}.cable_a_id || '#' || ${x}.fiber_a`
  const b = `${x}.cable_b_id || '#' || ${x}.fiber_b`
  return `(min(${a}, ${b}) || '|' || max(${a}, ${b}))`
}

// shared toMilliDb is Math.round(dB × 1000), halves towards +∞; SQLite's round() takes halves away from zero,
// so the floor form is spelt out. Sums of these whole numbers are exact in any order, as in totalsOf.
function milliDbSql(db: string): string {
  const v = `(${db}) * 1000`
  return `(CASE WHEN ${v} - floor(${v}) >= 0.5 THEN floor(${v}) + 1 ELSE floor(${v}) END)`
}

// The loss judgement of shared lossStatus on the estimate: over_target, accepted_with_flag and over_maximum
// all count as over the target, so an accept reason moves nothing here.
function overTargetSql(loss: string): string {
  return `(${loss} > @overTarget OR ${loss} > @overMaximum)`
}

const recomputeColumns =
  'planned, logged, off_plan, loss_count, loss_sum, loss_max, over_target, over_maximum, resplices, mismatches, ' +
  'photos, last_activity_at'

/**
 * One closure's full roll-up from rows, as one set-based statement. The same rules as shared rollUpClosure and
 * as the incremental path in insertSplice, which tests/unit/db/rollup-parity.test.ts holds both to.
 */
function recomputeSql(): string {
  const updates = recomputeColumns
    .split(', ')
    .map((column) => `${column} = excluded.${column}`)
    .join(', ')
  // Pairs are matched anywhere in the closure (logged, off_plan): one sort of the closure's plan rows and
  // current splices by pair key counts both sides of every pair, with no index on the fibers needed. Each
  // aggregate below has no GROUP BY, so it gives exactly one row, also for a closure with no rows.
  return `
    WITH pairs AS (
      SELECT sum(planned) AS planned, sum(spliced) AS spliced
      FROM (
        SELECT ${pairKeySql('pr')} AS pair, 1 AS planned, 0 AS spliced
        FROM plan_rows pr
        WHERE pr.closure_id = @closureId AND pr.deleted = 0
        UNION ALL
        SELECT ${pairKeySql('x')}, 0, 1
        FROM splices x
        WHERE x.closure_id = @closureId AND x.is_current = 1 AND x.deleted = 0
      )
      GROUP BY pair
    )
    INSERT INTO closure_totals (closure_id, project_id, ${recomputeColumns})
    SELECT c.id, c.project_id, p.planned, p.logged, p.off_plan, s.loss_count, s.loss_milli / 1000.0,
      ${milliDbSql('s.loss_max')} / 1000.0, s.over_target, s.over_maximum, a.resplices, s.mismatches, s.photos,
      a.last_activity_at
    FROM closures c,
    (
      SELECT coalesce(sum(planned), 0) AS planned,
        coalesce(sum(CASE WHEN spliced > 0 THEN planned ELSE 0 END), 0) AS logged,
        coalesce(sum(CASE WHEN planned = 0 THEN spliced ELSE 0 END), 0) AS off_plan
      FROM pairs
    ) p,
    (
      SELECT coalesce(sum(pr.id IS NULL OR NOT ${pairMatchSql('pr', 'x')}), 0) AS mismatches,
        count(x.loss_db) AS loss_count, coalesce(sum(${milliDbSql('x.loss_db')}), 0) AS loss_milli,
        max(x.loss_db) AS loss_max, coalesce(sum(${overTargetSql('x.loss_db')}), 0) AS over_target,
        coalesce(sum(x.loss_db > @overMaximum), 0) AS over_maximum,
        coalesce(sum(EXISTS (SELECT 1 FROM photo_links l
          WHERE l.entity = 'splice' AND l.entity_id = x.id AND l.deleted = 0)), 0) AS photos
      FROM splices x
      LEFT JOIN plan_rows pr
        ON pr.tray_id = x.tray_id AND pr.slot = x.slot AND pr.closure_id = x.closure_id AND pr.deleted = 0
      WHERE x.closure_id = @closureId AND x.is_current = 1 AND x.deleted = 0
    ) s,
    (
      SELECT coalesce(sum(is_current = 0), 0) AS resplices, max(created_at) AS last_activity_at
      FROM splices
      WHERE closure_id = @closureId AND deleted = 0
    ) a
    WHERE c.id = @closureId
    ON CONFLICT (closure_id) DO UPDATE SET project_id = excluded.project_id, ${updates}`
}

type Statement<P extends unknown[] = unknown[], R = unknown> = BetterSqlite3.Statement<P, R>

type PairParams = { closureId: string } & FiberPair

interface Statements {
  supersededRow: Statement<[string], SupersededRow>
  markSuperseded: Statement<[number, string]>
  insert: Statement<[Record<string, unknown>]>
  planAtSlot: Statement<[string, number, string], FiberPair>
  planRowsWithPair: Statement<[PairParams], { n: number }>
  otherCurrentWithPair: Statement<[PairParams & { exceptId: string | null }], { has: number }>
  addToTotals: Statement<[Record<string, unknown>]>
  hasPhoto: Statement<[string], { has: number }>
  spliceForPhoto: Statement<[string], { closure_id: string; is_current: number; deleted: number }>
  insertPhotoLink: Statement<[Record<string, unknown>]>
  bumpPhotos: Statement<[string]>
  recomputeClosure: Statement<[{ closureId: string; overTarget: number; overMaximum: number }]>
  projectClosures: Statement<[string], { id: string }>
  projectLimits: Statement<[string], { limits: string }>
}

const cache = new WeakMap<Sqlite, Statements>()

// Prepared once per connection: the write path runs for every pushed splice.
function statements(sqlite: Sqlite): Statements {
  const found = cache.get(sqlite)
  if (found) return found
  const made: Statements = {
    supersededRow: sqlite.prepare(
      `SELECT id, closure_id AS closureId, tray_id AS trayId, slot, cable_a_id AS cableAId, fiber_a AS fiberA,
         cable_b_id AS cableBId, fiber_b AS fiberB, loss_db AS lossDb, attempt, accept_reason AS acceptReason,
         is_current AS isCurrent, deleted
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
      `SELECT cable_a_id AS cableAId, fiber_a AS fiberA, cable_b_id AS cableBId, fiber_b AS fiberB
       FROM plan_rows WHERE tray_id = ? AND slot = ? AND closure_id = ? AND deleted = 0`,
    ),
    // One orientation at a time, so each half is an equality seek on the partial pair indexes
    // (plan_rows_live_pair, splices_current_pair); with the OR of both SQLite only uses the closure_id prefix
    // and reads every live row of the closure, ~30 µs a splice at 240 plan rows. UNION on rowid counts a
    // row that matches both orientations (a symmetric pair) once, as the OR does.
    planRowsWithPair: sqlite.prepare(
      `SELECT count(*) AS n FROM (
         SELECT pr.rowid FROM plan_rows pr
         WHERE pr.closure_id = @closureId AND pr.deleted = 0 AND ${pairSideSql('pr', ...asGiven)}
         UNION
         SELECT pr.rowid FROM plan_rows pr
         WHERE pr.closure_id = @closureId AND pr.deleted = 0 AND ${pairSideSql('pr', ...reversed)})`,
    ),
    otherCurrentWithPair: sqlite.prepare(
      `SELECT (EXISTS (SELECT 1 FROM splices x
           WHERE x.closure_id = @closureId AND x.is_current = 1 AND x.deleted = 0 AND x.id IS NOT @exceptId
             AND ${pairSideSql('x', ...asGiven)})
         OR EXISTS (SELECT 1 FROM splices x
           WHERE x.closure_id = @closureId AND x.is_current = 1 AND x.deleted = 0 AND x.id IS NOT @exceptId
             AND ${pairSideSql('x', ...reversed)})) AS has`,
    ),
    // Deltas, so the row is never read first. When the worst current splice was just replaced, the partial
    // index finds the closure's new worst (the subquery sees this transaction's writes). Losses are kept in
    // whole thousandths, as shared totalsOf keeps them: loss_sum is their sum / 1000, loss_max the highest.
    addToTotals: sqlite.prepare(
      `UPDATE closure_totals SET
         logged = logged + @logged, off_plan = off_plan + @offPlan, mismatches = mismatches + @mismatches,
         loss_count = loss_count + @lossCount, loss_sum = (round(loss_sum * 1000) + @lossMilli) / 1000.0,
         over_target = over_target + @overTarget, over_maximum = over_maximum + @overMaximum,
         resplices = resplices + @resplices, photos = photos + @photos,
         loss_max = CASE
           WHEN @anyLost = 1 OR (@oldLoss IS NOT NULL AND loss_max IS NOT NULL AND @oldLoss >= loss_max) THEN
             (SELECT ${milliDbSql('m.worst')} / 1000.0 FROM (SELECT max(loss_db) AS worst FROM splices
               WHERE closure_id = @closureId AND is_current = 1 AND deleted = 0) m)
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
    recomputeClosure: sqlite.prepare(recomputeSql()),
    projectClosures: sqlite.prepare('SELECT id FROM closures WHERE project_id = ?'),
    projectLimits: sqlite.prepare('SELECT limits FROM projects WHERE id = ?'),
  }
  cache.set(sqlite, made)
  return made
}

function thresholds(limits: ProjectLimits) {
  // The same sums as shared dbAbove (`a > b + dbEpsilon`), so SQL and the phone draw the line at one double.
  return {
    overTarget: limits.estimate.contractTargetDb + dbEpsilon,
    overMaximum: limits.estimate.standardMaxDb + dbEpsilon,
  }
}

/** What one current splice adds to the loss columns, worked out by shared totalsOf so they cannot drift. */
function lossPart(splice: JudgedSplice, limits: ProjectLimits) {
  const one: RollupSplice = { ...splice, supersedesId: null }
  const totals = totalsOf([one], limits)
  return {
    count: totals.withLoss,
    milli: totals.lossMilliDb,
    overTarget: totals.overTarget,
    overMaximum: totals.overMaximum,
    worst: splice.lossDb === null ? null : toMilliDb(splice.lossDb) / 1000,
  }
}

/** What insertSplice judges the added splice and the attempt it replaces with. */
interface Judging {
  st: Statements
  closureId: string
  counts: PlanPairCounts | undefined
  known: KnownBeforeInsert | undefined
  added: JudgedSplice
  /** The attempt being replaced, which no longer counts as another current splice. */
  exceptId: string | null
}

// Module functions rather than closures in insertSplice: it runs for every pushed splice.

/** Live plan rows of the closure joining the pair. */
function planRowsWith(j: Judging, pair: FiberPair): number {
  let n = j.counts?.get(j.closureId, pair)
  if (n === undefined) {
    n = j.st.planRowsWithPair.get({ closureId: j.closureId, ...pairOf(pair) })?.n ?? 0
    j.counts?.set(j.closureId, pair, n)
  }
  return n
}

/** Plan rows logged only through `splice`: none while another current splice joins its pair too. */
function loggedOnlyBy(j: Judging, splice: JudgedSplice): number {
  const rows = planRowsWith(j, splice)
  if (rows === 0) return 0
  // Every current splice joining the added pair shares a fiber end with it, so it is among the neighbours.
  if (j.known && splice === j.added)
    return j.known.neighbours.some((n) => n.id !== j.exceptId && samePair(n, splice)) ? 0 : rows
  const params = { closureId: j.closureId, ...pairOf(splice), exceptId: j.exceptId }
  return j.st.otherCurrentWithPair.get(params)?.has === 1 ? 0 : rows
}

/** 1 when the splice's slot has no live plan row or one for another pair. */
function mismatched(j: Judging, splice: JudgedSplice): number {
  const row =
    j.known && splice === j.added
      ? (j.known.planRow ?? undefined)
      : j.st.planAtSlot.get(splice.trayId, splice.slot, j.closureId)
  return row === undefined || !samePair(row, splice) ? 1 : 0
}

/**
 * Inserts a splice and keeps closure_totals current in the caller's transaction; a splice that supersedes
 * another makes that attempt no longer current.
 *
 * Only the added splice and the attempt it replaces change status: off_plan and mismatches move by their own
 * verdicts (the plan is fixed meanwhile), logged by the plan rows of a pair that gains its first current
 * splice or loses its last one.
 */
export function insertSplice(
  conn: Conn,
  splice: SpliceInput,
  options: {
    serverSeq: number
    limits: ProjectLimits
    pending?: PendingTotals
    known?: KnownBeforeInsert
    /** Plan rows joining a pair, kept by the caller while no plan row can change (a push batch). */
    planPairs?: PlanPairCounts
  },
): InsertSpliceResult {
  const sqlite = rawSqlite(conn)
  const st = statements(sqlite)
  const { serverSeq, limits } = options
  const { closureId } = splice
  const createdAt = splice.createdAt ?? new Date().toISOString()
  const added: JudgedSplice = {
    id: splice.id,
    trayId: splice.trayId,
    slot: splice.slot,
    cableAId: splice.cableAId,
    fiberA: splice.fiberA,
    cableBId: splice.cableBId,
    fiberB: splice.fiberB,
    lossDb: splice.lossDb ?? null,
    attempt: splice.attempt ?? 1,
    acceptReason: splice.acceptReason ?? null,
  }

  let old: SupersededRow | undefined
  if (splice.supersedesId) {
    old = st.supersededRow.get(splice.supersedesId)
    if (!old) throw new SpliceWriteError('supersedes_unknown', `splice ${splice.supersedesId} does not exist`)
    if (old.closureId !== closureId) {
      throw new SpliceWriteError('supersedes_other_closure', `splice ${old.id} belongs to another closure`)
    }
  }
  // Only a current, live attempt counts in the totals; replacing one that was already replaced changes nothing.
  const removed = old !== undefined && old.isCurrent === 1 && old.deleted === 0 ? old : undefined

  // Everything is read before the write, and the new state worked out from it rather than read again.
  const judging: Judging = {
    st,
    closureId,
    counts: options.planPairs,
    known: options.known,
    added,
    exceptId: removed?.id ?? null,
  }
  let logged = 0
  let offPlan = 0
  let mismatches = 0
  const samePairAsRemoved = removed !== undefined && samePair(removed, added)
  // A re-splice of the same joint (the usual case) leaves the pair and slot verdicts as they were.
  if (!samePairAsRemoved) {
    logged += loggedOnlyBy(judging, added)
    offPlan += planRowsWith(judging, added) === 0 ? 1 : 0
    if (removed) {
      logged -= loggedOnlyBy(judging, removed)
      offPlan -= planRowsWith(judging, removed) === 0 ? 1 : 0
    }
  }
  if (!(samePairAsRemoved && removed.trayId === added.trayId && removed.slot === added.slot)) {
    mismatches += mismatched(judging, added) - (removed ? mismatched(judging, removed) : 0)
  }
  const oldHadPhoto = removed ? st.hasPhoto.get(removed.id)?.has === 1 : false

  if (old && old.isCurrent === 1) st.markSuperseded.run(serverSeq, old.id)
  st.insert.run({
    id: splice.id,
    closureId,
    trayId: splice.trayId,
    slot: splice.slot,
    cableAId: splice.cableAId,
    fiberA: splice.fiberA,
    cableBId: splice.cableBId,
    fiberB: splice.fiberB,
    method: splice.method,
    lossDb: added.lossDb,
    attempt: added.attempt,
    respliceReason: splice.respliceReason ?? null,
    respliceNote: splice.respliceNote ?? null,
    supersedesId: splice.supersedesId ?? null,
    acceptReason: added.acceptReason,
    notes: splice.notes ?? '',
    splicedAt: splice.splicedAt,
    splicerId: splice.splicerId,
    clientId: splice.clientId,
    flags: JSON.stringify(splice.flags ?? []),
    reviewState: splice.reviewState ?? null,
    createdAt,
    serverSeq,
  })

  const gained = lossPart(added, limits)
  const lost = removed
    ? lossPart(removed, limits)
    : { count: 0, milli: 0, overTarget: 0, overMaximum: 0, worst: null }
  const delta: TotalsDelta = {
    logged,
    offPlan,
    mismatches,
    lossCount: gained.count - lost.count,
    lossMilli: gained.milli - lost.milli,
    overTarget: gained.overTarget - lost.overTarget,
    overMaximum: gained.overMaximum - lost.overMaximum,
    resplices: removed ? 1 : 0,
    // A photo link may arrive before its splice (no foreign key), so the new splice may already have one.
    photos: (st.hasPhoto.get(splice.id)?.has === 1 ? 1 : 0) - (oldHadPhoto ? 1 : 0),
    newLoss: gained.worst,
    oldLoss: lost.worst,
    anyLost: 0,
    createdAt,
  }
  if (options.pending) options.pending.stage(closureId, limits, delta)
  else addToTotals(sqlite, closureId, limits, delta)
  return { supersededId: old?.id ?? null, supersededWasCurrent: old?.isCurrent === 1 }
}

/** How many live plan rows of a closure join a pair (either orientation), as far as the keeper knows. */
export interface PlanPairCounts {
  get(closureId: string, pair: FiberPair): number | undefined
  set(closureId: string, pair: FiberPair, count: number): void
}

/**
 * What the caller has already read, in the same transaction, for the splice it is about to insert: the live
 * plan row at its tray slot (null: none), and the closure's current live splices sharing its slot or a fiber
 * end (the attempt it replaces included), as syncReads spliceNeighbours reads them.
 */
export interface KnownBeforeInsert {
  planRow: FiberPair | null
  neighbours: ReadonlyArray<FiberPair & { id: string }>
}

/** What one write adds to a closure's totals row (counts as differences, losses as their worst). */
interface TotalsDelta {
  logged: number
  offPlan: number
  mismatches: number
  lossCount: number
  lossMilli: number
  overTarget: number
  overMaximum: number
  resplices: number
  photos: number
  /** The highest loss added, and the loss of the current splice taken away (null: none). */
  newLoss: number | null
  oldLoss: number | null
  /** 1 when some splice with a loss stopped being current: loss_max is then read again from the rows. */
  anyLost: 0 | 1
  createdAt: string
}

function addToTotals(sqlite: Sqlite, closureId: string, limits: ProjectLimits, delta: TotalsDelta): void {
  const changed = statements(sqlite).addToTotals.run({ closureId, ...delta }).changes
  // No totals row yet (the trigger makes one with every closure, so only in odd set-ups): build it from rows.
  if (changed === 0) recomputeClosureTotals(sqlite, closureId, limits)
}

const maxOf = (a: number | null, b: number | null) => (a === null ? b : b === null ? a : Math.max(a, b))

/**
 * The totals deltas of a push batch, written once per closure when the batch settles instead of once per
 * splice: a totals row carries three board indexes, and rewriting them for every splice of a 100-splice batch
 * was a sixth of the push. A mutation's deltas are staged while its savepoint is open and kept only when it
 * is released, so a refused mutation leaves no trace here either. Every delta is worked out from rows, never
 * from the totals row, so adding them up later gives the same row as adding them one by one.
 */
export class PendingTotals {
  private readonly kept = new Map<string, { limits: ProjectLimits; delta: TotalsDelta }>()
  private staged: Array<{ closureId: string; limits: ProjectLimits; delta: TotalsDelta }> = []

  stage(closureId: string, limits: ProjectLimits, delta: TotalsDelta): void {
    this.staged.push({ closureId, limits, delta })
  }

  /** The open mutation was applied: its deltas join the batch's. */
  keepStaged(): void {
    for (const { closureId, limits, delta } of this.staged) {
      const sum = this.kept.get(closureId)
      if (!sum) {
        // A loss taken away is settled by reading the worst current one again, whatever the order.
        const anyLost = delta.oldLoss !== null ? 1 : 0
        this.kept.set(closureId, { limits, delta: { ...delta, oldLoss: null, anyLost } })
        continue
      }
      const d = sum.delta
      d.logged += delta.logged
      d.offPlan += delta.offPlan
      d.mismatches += delta.mismatches
      d.lossCount += delta.lossCount
      d.lossMilli += delta.lossMilli
      d.overTarget += delta.overTarget
      d.overMaximum += delta.overMaximum
      d.resplices += delta.resplices
      d.photos += delta.photos
      d.newLoss = maxOf(d.newLoss, delta.newLoss)
      if (delta.oldLoss !== null) d.anyLost = 1
      if (delta.createdAt > d.createdAt) d.createdAt = delta.createdAt
    }
    this.staged = []
  }

  /** The open mutation was refused and its savepoint rolled back. */
  dropStaged(): void {
    this.staged = []
  }

  /** Writes the kept deltas, one statement per closure; the batch transaction must still be open. */
  flush(conn: Conn): void {
    const sqlite = rawSqlite(conn)
    for (const [closureId, { limits, delta }] of this.kept) addToTotals(sqlite, closureId, limits, delta)
    this.kept.clear()
  }
}

function pairOf(pair: FiberPair): FiberPair {
  return { cableAId: pair.cableAId, fiberA: pair.fiberA, cableBId: pair.cableBId, fiberB: pair.fiberB }
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
  statements(rawSqlite(conn)).recomputeClosure.run({ closureId, ...thresholds(limits) })
}

/** Rebuilds the totals of every closure in a project from rows (after a change of the project's limits). */
export function recomputeProjectTotals(conn: Conn, projectId: string, limits: ProjectLimits): void {
  const st = statements(rawSqlite(conn))
  const params = thresholds(limits)
  // Closure by closure: matching pairs sorts the plan rows and splices by pair, which stays small and in
  // memory per closure; one statement over the project sorts them all at once and was twice as slow at 1M.
  for (const { id } of st.projectClosures.all(projectId))
    st.recomputeClosure.run({ closureId: id, ...params })
}

/** The project's loss limits as stored, or undefined for an unknown project. */
export function loadProjectLimits(conn: Conn, projectId: string): ProjectLimits | undefined {
  const row = statements(rawSqlite(conn)).projectLimits.get(projectId)
  return row ? (JSON.parse(row.limits) as ProjectLimits) : undefined
}

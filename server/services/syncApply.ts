import { eq } from 'drizzle-orm'
import { v7 as uuidv7 } from 'uuid'
import type { Conn } from '#db/client'
import { closures, notes, photoLinks, splices } from '#db/schema/index'
import { assessSplice, type NeighbourSplice } from '#shared/domain/acceptance'
import { type FiberPair, fiberEndKey, pairKey, samePair, slotKey } from '#shared/domain/plan'
import type { SlottedPair } from '#shared/domain/plan'
import type { Role } from '#shared/schemas/enums'
import type { ProjectLimits } from '#shared/schemas/project'
import type { SpliceCreate, SpliceUpdate } from '#shared/schemas/splice'
import { mutationArgsSchemas, type MutationName, type Overwritten } from '#shared/schemas/sync'
import { AppError } from '../errors'
import type { Actor } from '../middleware/auth'
import { type Change, recordEvent, recordFieldChanges } from '../repositories/audit'
import { dbOf, recordsOf } from '../repositories/records'
import {
  insertPhotoLink,
  insertSplice,
  type KnownBeforeInsert,
  type PlanPairCounts,
  loadProjectLimits,
  PendingTotals,
} from '../repositories/splices'
import { tombstonePhotoLink, tombstoneSplice, updateSpliceFields } from '../repositories/spliceUpdates'
import { closuresShowingPhoto, findPhoto } from '../repositories/photos'
import {
  cableFacts,
  type ClosureFacts,
  closureCurrentSplices,
  closureFacts,
  closurePlanRows,
  type CableFacts,
  type FieldStamp,
  planRowAt,
  spliceFieldStamps,
  spliceIdTaken,
  spliceNeighbours,
  type TrayFacts,
  trayFacts,
  userFacts,
} from '../repositories/syncReads'
import { assertLeadsClosure, canSeeClosure } from './access'

// The effect of each pushed mutation, run inside its own savepoint of the batch transaction. A rule broken
// here is permanent: the mutation throws an AppError whose code becomes the rejection code, and the savepoint
// takes every write of the mutation back.

/** Codes of permanent refusals; anything else thrown while applying is not the payload's fault. */
export const refusalCodes = ['invalid', 'forbidden', 'closure_locked', 'not_found', 'conflict'] as const
export type RefusalCode = (typeof refusalCodes)[number]

const statusOf: Record<RefusalCode, number> = {
  invalid: 400,
  forbidden: 403,
  closure_locked: 409,
  not_found: 404,
  conflict: 409,
}

/** A permanent refusal of one mutation. */
export function refuse(code: RefusalCode, message: string): AppError {
  return new AppError(code, message, statusOf[code])
}

/** Who applies the mutation, from which device, and where in the change sequence. */
export interface ApplyEnv {
  conn: Conn
  actor: Actor
  clientId: string
  /** The mutation's seq from the device, written on every audit row it causes. */
  seq: number
  baseServerSeq: number
  clientTime: string
  /** The change sequence value of this mutation's savepoint. */
  serverSeq: number
  /** Server time of the push. */
  at: string
  /** Facts read once per batch: see BatchMemo. */
  memo: BatchMemo
}

/**
 * Reads memoised for one batch. The batch holds the write lock throughout, so only its own mutations could
 * change them: project limits, trays, cables and plan rows no mutation writes; closures setClosure writes,
 * and it (like any refusal, whose savepoint may have undone one) drops the closure facts.
 */
export interface BatchMemo {
  limits: Map<string, ProjectLimits>
  closures: Map<string, ClosureFacts | undefined>
  trays: Map<string, TrayFacts | undefined>
  cables: Map<string, CableFacts | undefined>
  /** Plan rows by closure, slot and pair (see BatchPlans). */
  plans: BatchPlans
  /** Current splices of the closures the batch's new splices keep coming back to (see BatchSplices). */
  splices: BatchSplices
  /** Closure totals deltas of new splices, written when the batch settles (see settleTotals). */
  totals: PendingTotals
}

export function newBatchMemo(): BatchMemo {
  return {
    limits: new Map(),
    closures: new Map(),
    trays: new Map(),
    cables: new Map(),
    plans: new BatchPlans(),
    splices: new BatchSplices(),
    totals: new PendingTotals(),
  }
}

/**
 * The plan rows a batch's new splices are judged against (the slot's row, the rows joining a pair). No mutation
 * writes plan rows, so what is read holds for the whole batch. A closure's rows are read one by one at first;
 * from its `wholePlanAfter`-th splice in the batch on, its whole live plan is read once and answered from.
 */
export class BatchPlans implements PlanPairCounts {
  static readonly wholePlanAfter = 4
  private readonly slots = new Map<string, SlottedPair | null>()
  private readonly pairs = new Map<string, number>()
  private readonly uses = new Map<string, number>()
  private readonly whole = new Set<string>()

  /** Counts a new splice judged in the closure; reads its whole plan when the batch keeps coming back to it. */
  touch(conn: Conn, closureId: string): void {
    if (this.whole.has(closureId)) return
    const uses = (this.uses.get(closureId) ?? 0) + 1
    this.uses.set(closureId, uses)
    if (uses < BatchPlans.wholePlanAfter) return
    const pairs = new Map<string, number>()
    for (const row of closurePlanRows(conn, closureId)) {
      this.slots.set(`${closureId}|${row.trayId}|${row.slot}`, row)
      const key = `${closureId}|${pairKey(row)}`
      pairs.set(key, (pairs.get(key) ?? 0) + 1)
    }
    for (const [key, n] of pairs) this.pairs.set(key, n)
    this.whole.add(closureId)
  }

  /** The live plan row at a tray slot of the closure, or null when the plan leaves it empty. */
  rowAt(conn: Conn, closureId: string, trayId: string, slot: number): SlottedPair | null {
    const key = `${closureId}|${trayId}|${slot}`
    const found = this.slots.get(key)
    if (found !== undefined) return found
    if (this.whole.has(closureId)) return null
    const row = planRowAt(conn, closureId, trayId, slot)
    this.slots.set(key, row)
    return row
  }

  get(closureId: string, pair: FiberPair): number | undefined {
    const n = this.pairs.get(`${closureId}|${pairKey(pair)}`)
    return n === undefined && this.whole.has(closureId) ? 0 : n
  }

  set(closureId: string, pair: FiberPair, count: number): void {
    this.pairs.set(`${closureId}|${pairKey(pair)}`, count)
  }
}

/** A closure's current live splices, by id and by the tray slot and fiber ends a neighbour may share. */
interface CurrentSplices {
  byId: Map<string, NeighbourSplice>
  byPlace: Map<string, Set<string>>
}

const slotPlace = (s: Pick<NeighbourSplice, 'trayId' | 'slot'>) => `slot|${slotKey(s.trayId, s.slot)}`
const endPlace = (cableId: string, fiber: number) => `end|${fiberEndKey(cableId, fiber)}`

/**
 * The current live splices of the closures a batch's new splices keep coming back to, so a new splice's
 * neighbours (what syncReads spliceNeighbours reads: the closure's other current splices sharing its slot or
 * a fiber end) come from memory instead of five index probes each. Like BatchPlans, a closure's splices are
 * read once, from its `BatchPlans.wholePlanAfter`-th new splice in the batch on; the batch's new splices and
 * re-splices keep them current. Any other mutation may move or remove splices, so the batch drops them all
 * before one (sync.ts), and on any refusal (its savepoint may have undone a write).
 */
export class BatchSplices {
  private readonly uses = new Map<string, number>()
  private readonly closures = new Map<string, CurrentSplices>()

  /** Counts a new splice of the closure; reads its current splices when the batch keeps coming back to it. */
  touch(conn: Conn, closureId: string): void {
    if (this.closures.has(closureId)) return
    const uses = (this.uses.get(closureId) ?? 0) + 1
    this.uses.set(closureId, uses)
    if (uses < BatchPlans.wholePlanAfter) return
    const current: CurrentSplices = { byId: new Map(), byPlace: new Map() }
    for (const splice of closureCurrentSplices(conn, closureId)) BatchSplices.add(current, splice)
    this.closures.set(closureId, current)
  }

  /** As spliceNeighbours: from memory when the closure's splices are held, read otherwise. */
  neighbours(conn: Conn, splice: NeighbourSplice): NeighbourSplice[] {
    const current = this.closures.get(splice.closureId)
    if (!current) return spliceNeighbours(conn, splice)
    const ids = new Set<string>()
    for (const place of [
      slotPlace(splice),
      endPlace(splice.cableAId, splice.fiberA),
      endPlace(splice.cableBId, splice.fiberB),
    ]) {
      for (const id of current.byPlace.get(place) ?? []) if (id !== splice.id) ids.add(id)
    }
    return [...ids].map((id) => current.byId.get(id)!)
  }

  /** A new splice was stored as current; the attempt it replaced, if any, is no longer current. */
  inserted(splice: NeighbourSplice, supersededId: string | null): void {
    const current = this.closures.get(splice.closureId)
    if (!current) return
    const old = supersededId === null ? undefined : current.byId.get(supersededId)
    if (old) {
      current.byId.delete(old.id)
      for (const place of BatchSplices.places(old)) current.byPlace.get(place)?.delete(old.id)
    }
    BatchSplices.add(current, splice)
  }

  clear(): void {
    this.uses.clear()
    this.closures.clear()
  }

  private static places(splice: NeighbourSplice): string[] {
    return [
      slotPlace(splice),
      endPlace(splice.cableAId, splice.fiberA),
      endPlace(splice.cableBId, splice.fiberB),
    ]
  }

  private static add(current: CurrentSplices, splice: NeighbourSplice): void {
    const kept: NeighbourSplice = {
      id: splice.id,
      closureId: splice.closureId,
      trayId: splice.trayId,
      slot: splice.slot,
      cableAId: splice.cableAId,
      fiberA: splice.fiberA,
      cableBId: splice.cableBId,
      fiberB: splice.fiberB,
    }
    current.byId.set(kept.id, kept)
    for (const place of BatchSplices.places(kept)) {
      let ids = current.byPlace.get(place)
      if (!ids) {
        ids = new Set()
        current.byPlace.set(place, ids)
      }
      ids.add(kept.id)
    }
  }
}

/** Mutations whose totals changes may wait for the end of the batch; any other first settles the waiting ones. */
export const deferrableTotals: ReadonlySet<MutationName> = new Set(['createSplice', 'resplice'])

/** The memoised value of `key`, read with `load` the first time (undefined and null are memoised too). */
function memoised<K, V>(map: Map<K, V>, key: K, load: () => V): V {
  if (map.has(key)) return map.get(key) as V
  const value = load()
  map.set(key, value)
  return value
}

const closureOf = (env: ApplyEnv, id: string) =>
  memoised(env.memo.closures, id, () => closureFacts(env.conn, id))
const trayOf = (env: ApplyEnv, id: string) => memoised(env.memo.trays, id, () => trayFacts(env.conn, id))
const cableOf = (env: ApplyEnv, id: string) => memoised(env.memo.cables, id, () => cableFacts(env.conn, id))

/** How a mutation that was not refused went: applied, or merged with some of its values overwritten. */
export interface ApplyOutcome {
  status: 'applied' | 'merged'
  overwritten?: Overwritten[]
}

const closureRecords = recordsOf(closures)
const applied: ApplyOutcome = { status: 'applied' }

// A foreman's or the office's write beats a splicer's; equal ranks fall back to arrival order.
const rank: Record<Role, number> = { splicer: 1, foreman: 2, office: 2, inspector: 0 }

function change(env: ApplyEnv, entity: string, entityId: string): Change {
  return {
    userId: env.actor.id,
    clientId: env.clientId,
    mutationSeq: env.seq,
    entity,
    entityId,
    at: env.at,
  }
}

function limitsOf(env: ApplyEnv, projectId: string): ProjectLimits {
  let limits = env.memo.limits.get(projectId)
  if (!limits) {
    limits = loadProjectLimits(env.conn, projectId)
    if (!limits) throw refuse('not_found', 'The project was not found.')
    env.memo.limits.set(projectId, limits)
  }
  return limits
}

/** The closure when it exists and the actor may see it; another crew's closure reads as missing. */
function visibleClosure(env: ApplyEnv, closureId: string): ClosureFacts {
  const closure = closureOf(env, closureId)
  if (!closure || closure.deleted || !canSeeClosure(env.actor, closure))
    throw refuse('not_found', 'The closure was not found.')
  return closure
}

/** A signed-off closure takes no splicer changes; the foreman reopens it or re-applies the payload. */
function assertOpenForActor(env: ApplyEnv, closure: ClosureFacts): void {
  if (closure.state === 'signed_off' && env.actor.role === 'splicer') {
    throw refuse(
      'closure_locked',
      'The closure is signed off; the foreman can reopen it or apply this change.',
    )
  }
}

function assertLeads(env: ApplyEnv, closure: ClosureFacts): void {
  try {
    assertLeadsClosure(env.actor, closure)
  } catch {
    throw refuse('forbidden', 'Only the foreman of this crew or the office may do this.')
  }
}

/** A splicer records splices as themselves; a foreman or the office may record them for their crew. */
function assertAuthor(env: ApplyEnv, closure: ClosureFacts, splicerId: string): void {
  if (splicerId === env.actor.id) return
  if (env.actor.role === 'splicer') throw refuse('forbidden', 'A splicer records splices as themselves only.')
  const author = userFacts(env.conn, splicerId)
  if (!author || !author.active) throw refuse('invalid', 'The splicer named on the splice is not a user.')
  if (author.crewId === null || author.crewId !== closure.crewId) {
    throw refuse('forbidden', `${author.name} is not in the crew of this closure.`)
  }
}

type Placement = Pick<SpliceCreate, 'trayId' | 'slot' | 'cableAId' | 'fiberA' | 'cableBId' | 'fiberB'>

/** The splice must fit the closure: its tray, a slot within the tray, cables of the project. */
function assertFits(env: ApplyEnv, closure: ClosureFacts, splice: Placement): void {
  const tray = trayOf(env, splice.trayId)
  if (!tray || tray.deleted || tray.closureId !== closure.id)
    throw refuse('invalid', 'The tray is not in this closure.')
  if (splice.slot > tray.capacity)
    throw refuse('invalid', `The tray has ${tray.capacity} slots; slot ${splice.slot} is not one of them.`)
  for (const [cableId, fiber] of [
    [splice.cableAId, splice.fiberA],
    [splice.cableBId, splice.fiberB],
  ] as const) {
    const cable = cableOf(env, cableId)
    if (!cable || cable.deleted || cable.projectId !== closure.projectId)
      throw refuse('invalid', 'A cable of the splice is not in this project.')
    if (fiber > cable.fiberCount)
      throw refuse('invalid', `The cable has ${cable.fiberCount} fibers, not ${fiber}.`)
  }
  if (splice.cableAId === splice.cableBId && splice.fiberA === splice.fiberB)
    throw refuse('invalid', 'A fiber cannot be spliced to itself.')
}

/** The flags assessSplice gives, and the plan row and neighbours it judged them from. */
function assessed(
  env: ApplyEnv,
  closure: ClosureFacts,
  limits: ProjectLimits,
  splice: Parameters<typeof assessSplice>[0],
): { flags: string[]; known: KnownBeforeInsert } {
  const planRow = env.memo.plans.rowAt(env.conn, closure.id, splice.trayId, splice.slot)
  const neighbours = env.memo.splices.neighbours(env.conn, splice)
  const { flags } = assessSplice(splice, limits, {
    planRow,
    otherCurrentSplices: neighbours,
    closureState: closure.state,
  })
  return { flags, known: { planRow, neighbours } }
}

function flagsFor(
  env: ApplyEnv,
  closure: ClosureFacts,
  limits: ProjectLimits,
  splice: Parameters<typeof assessSplice>[0],
): string[] {
  return assessed(env, closure, limits, splice).flags
}

function setClosure(env: ApplyEnv, before: Record<string, unknown>, id: string, patch: object): void {
  env.memo.closures.delete(id)
  closureRecords.update(env.conn, id, patch, env.serverSeq)
  recordFieldChanges(env.conn, change(env, 'closure', id), before, patch as Record<string, unknown>)
}

function createSplice(env: ApplyEnv, args: unknown, name: 'createSplice' | 'resplice'): ApplyOutcome {
  const input = mutationArgsSchemas[name].parse(args)
  if (name === 'resplice' && input.supersedesId === null)
    throw refuse('invalid', 'A re-splice names the attempt it replaces (supersedesId).')
  const closure = visibleClosure(env, input.closureId)
  assertOpenForActor(env, closure)
  assertAuthor(env, closure, input.splicerId)
  assertFits(env, closure, input)
  if (spliceIdTaken(env.conn, input.id)) throw refuse('conflict', 'A splice with this id already exists.')
  if (input.supersedesId !== null) {
    const old = spliceRow(env.conn, input.supersedesId)
    if (!old || old.deleted) throw refuse('not_found', 'The attempt this re-splice replaces was not found.')
    if (old.closureId !== closure.id)
      throw refuse('invalid', 'A re-splice stays in the closure of the attempt it replaces.')
    if (!samePair(old, input))
      throw refuse('invalid', 'A re-splice joins the same two fibers as the attempt it replaces.')
    if (input.attempt <= old.attempt)
      throw refuse('invalid', `This attempt must come after attempt ${old.attempt} it replaces.`)
  }
  const limits = limitsOf(env, closure.projectId)
  env.memo.plans.touch(env.conn, closure.id)
  env.memo.splices.touch(env.conn, closure.id)
  // The plan row and neighbours the flags were judged from also settle the totals deltas: no second read.
  const { flags, known } = assessed(env, closure, limits, input)
  const { supersededId } = insertSplice(
    env.conn,
    { ...input, flags, reviewState: null, createdAt: env.at },
    { serverSeq: env.serverSeq, limits, pending: env.memo.totals, known, planPairs: env.memo.plans },
  )
  env.memo.splices.inserted(input, supersededId)
  recordEvent(env.conn, change(env, 'splice', input.id), 'created', input)
  // The first splice starts the work on a closure.
  if (closure.state === 'planned')
    setClosure(env, { state: closure.state }, closure.id, { state: 'in_progress' })
  return applied
}

function spliceRow(conn: Conn, id: string) {
  return dbOf(conn).select().from(splices).where(eq(splices.id, id)).get()
}

type EditableField = keyof SpliceUpdate

/** Splice fields whose change moves the splice in its closure (and so must still fit it). */
const placementFields = new Set<string>(['trayId', 'slot', 'cableAId', 'fiberA', 'cableBId', 'fiberB'])

/** A value that lost a conflict, and whose it was: it goes to the audit trail as `conflict_lost`. */
interface LostValue {
  field: EditableField
  kept: unknown
  lost: unknown
  by: Change
}

function updateSplice(env: ApplyEnv, args: unknown): ApplyOutcome {
  const { id, fields } = mutationArgsSchemas.updateSplice.parse(args)
  const splice = spliceRow(env.conn, id)
  if (!splice || splice.deleted) throw refuse('not_found', 'The splice was not found.')
  const closure = visibleClosure(env, splice.closureId)
  assertOpenForActor(env, closure)
  if (env.actor.role === 'splicer' && splice.splicerId !== env.actor.id)
    throw refuse('forbidden', 'A splicer edits their own splices only.')

  // A field conflicts when an accepted change of it is newer than the device's base. The row's server_seq
  // bounds every field's, so an edit from an up-to-date device needs no stamps at all.
  const stamps =
    splice.serverSeq > env.baseServerSeq ? spliceFieldStamps(env.conn, id) : new Map<string, FieldStamp>()
  const current = splice as unknown as Record<EditableField, unknown>
  const patch: Partial<Record<EditableField, unknown>> = {}
  const won = new Set<EditableField>()
  const lost: LostValue[] = []
  const overwritten: Overwritten[] = []
  for (const [field, value] of Object.entries(fields) as [EditableField, unknown][]) {
    if (JSON.stringify(value) === JSON.stringify(current[field])) continue
    const stamp = stamps.get(field)
    // A change made outside push cannot be dated more finely than the row's own server_seq: assume that.
    const changedAt = stamp ? (stamp.serverSeq ?? splice.serverSeq) : 0
    // A device editing on top of its own earlier accepted edit is not in conflict with itself.
    if (!stamp || changedAt <= env.baseServerSeq || stamp.clientId === env.clientId) {
      patch[field] = value
      continue
    }
    if (rank[env.actor.role] >= rank[stamp.role ?? 'splicer']) {
      patch[field] = value
      won.add(field)
      lost.push({
        field,
        kept: value,
        lost: current[field],
        by: {
          ...change(env, 'splice', id),
          userId: stamp.userId,
          clientId: stamp.clientId,
          mutationSeq: stamp.mutationSeq,
        },
      })
    } else {
      lost.push({ field, kept: current[field], lost: value, by: change(env, 'splice', id) })
      overwritten.push({
        field,
        yours: value,
        kept: current[field],
        byUserId: stamp.userId,
        byName: stamp.userName,
      })
    }
  }

  const ref = change(env, 'splice', id)
  // conflict_lost rows read: old_value is the value kept, new_value the one that lost, user_id its author.
  for (const entry of lost)
    recordFieldChanges(
      env.conn,
      entry.by,
      { [entry.field]: entry.kept },
      { [entry.field]: entry.lost },
      'conflict_lost',
    )
  const changed = Object.keys(patch).length > 0
  // A conflict, or a splicer changing a reviewed splice, sends the splice back to the review queue.
  const resetReview =
    splice.reviewState !== null && (lost.length > 0 || (changed && env.actor.role === 'splicer'))
  if (changed || resetReview) {
    const next = { ...splice, ...patch } as typeof splice
    if (Object.keys(patch).some((field) => placementFields.has(field))) assertFits(env, closure, next)
    if (next.supersedesId !== null && next.respliceReason === null)
      throw refuse('invalid', 'A re-splice keeps the reason it was made again.')
    const limits = limitsOf(env, closure.projectId)
    updateSpliceFields(
      env.conn,
      splice,
      {
        ...(patch as SpliceUpdate),
        flags: flagsFor(env, closure, limits, next),
        ...(resetReview ? { reviewState: null, reviewReason: null, reviewedBy: null, reviewedAt: null } : {}),
      },
      { serverSeq: env.serverSeq, limits },
    )
    const plain = Object.entries(patch).filter(([field]) => !won.has(field as EditableField))
    recordFieldChanges(env.conn, ref, current, Object.fromEntries(plain), 'applied')
    const merged = Object.entries(patch).filter(([field]) => won.has(field as EditableField))
    recordFieldChanges(env.conn, ref, current, Object.fromEntries(merged), 'merged')
    if (resetReview) recordFieldChanges(env.conn, ref, current, { reviewState: null, reviewReason: null })
  }
  return overwritten.length > 0 ? { status: 'merged', overwritten } : applied
}

function deleteSplice(env: ApplyEnv, args: unknown): ApplyOutcome {
  const { id } = mutationArgsSchemas.deleteSplice.parse(args)
  const splice = spliceRow(env.conn, id)
  if (!splice || splice.deleted) throw refuse('not_found', 'The splice was not found.')
  const closure = visibleClosure(env, splice.closureId)
  if (closure.state === 'signed_off')
    throw refuse('closure_locked', 'The closure is signed off; reopen it before removing a splice.')
  if (env.actor.role === 'splicer' && splice.splicerId !== env.actor.id)
    throw refuse('forbidden', 'A splicer removes their own splices only.')
  if (splice.reviewState !== null)
    throw refuse('conflict', 'The splice has been reviewed; it stays on record.')
  if (!splice.isCurrent)
    throw refuse('conflict', 'A later attempt replaces this splice; remove that one first.')
  tombstoneSplice(env.conn, splice, { serverSeq: env.serverSeq, limits: limitsOf(env, closure.projectId) })
  recordEvent(env.conn, change(env, 'splice', id), 'deleted')
  return applied
}

/** The closure a photo or note target belongs to, when the target is live. */
function closureOfTarget(
  env: ApplyEnv,
  entity: 'splice' | 'tray' | 'closure',
  entityId: string,
): ClosureFacts {
  let closureId: string | undefined = entityId
  if (entity === 'splice') {
    const splice = spliceRow(env.conn, entityId)
    closureId = splice && !splice.deleted ? splice.closureId : undefined
  } else if (entity === 'tray') {
    const tray = trayOf(env, entityId)
    closureId = tray && !tray.deleted ? tray.closureId : undefined
  }
  if (!closureId) throw refuse('not_found', `The ${entity} was not found.`)
  return visibleClosure(env, closureId)
}

function addPhotoLink(env: ApplyEnv, args: unknown): ApplyOutcome {
  const input = mutationArgsSchemas.addPhotoLink.parse(args)
  const closure = closureOfTarget(env, input.entity, input.entityId)
  assertOpenForActor(env, closure)
  const existing = dbOf(env.conn).select().from(photoLinks).where(eq(photoLinks.id, input.id)).get()
  if (existing) {
    const same =
      existing.sha256 === input.sha256 &&
      existing.entity === input.entity &&
      existing.entityId === input.entityId
    if (same && !existing.deleted) return applied
    throw refuse('conflict', 'A photo link with this id already exists.')
  }
  // A link grants read access to the photo, so a stored photo may only be linked by its uploader or by
  // someone who can already read it; a photo not uploaded yet can be linked (push never waits for uploads).
  const photo = findPhoto(env.conn, input.sha256)
  if (
    photo &&
    photo.uploadedBy !== env.actor.id &&
    !closuresShowingPhoto(env.conn, input.sha256).some((c) => canSeeClosure(env.actor, c))
  ) {
    throw refuse('not_found', 'The photo was not found.')
  }
  insertPhotoLink(
    env.conn,
    { ...input, addedBy: env.actor.id, createdAt: env.at },
    { serverSeq: env.serverSeq },
  )
  recordEvent(env.conn, change(env, 'photo_link', input.id), 'created', input)
  return applied
}

function removePhotoLink(env: ApplyEnv, args: unknown): ApplyOutcome {
  const { id } = mutationArgsSchemas.removePhotoLink.parse(args)
  const link = dbOf(env.conn).select().from(photoLinks).where(eq(photoLinks.id, id)).get()
  if (!link) throw refuse('not_found', 'The photo link was not found.')
  const closure = closureOfLink(env, link)
  assertOpenForActor(env, closure)
  if (env.actor.role === 'splicer' && link.addedBy !== env.actor.id)
    throw refuse('forbidden', 'A splicer removes the photos they added only.')
  // Removing from an add-only set twice leaves the same set.
  if (link.deleted) return applied
  tombstonePhotoLink(env.conn, link, closure.id, {
    serverSeq: env.serverSeq,
    limits: limitsOf(env, closure.projectId),
  })
  recordEvent(env.conn, change(env, 'photo_link', id), 'deleted')
  return applied
}

function closureOfLink(env: ApplyEnv, link: typeof photoLinks.$inferSelect): ClosureFacts {
  // The link's splice may be gone (tombstoned) while the link is removed; its closure still decides.
  if (link.entity === 'splice') {
    const splice = spliceRow(env.conn, link.entityId)
    if (!splice) throw refuse('not_found', 'The photo link was not found.')
    return visibleClosure(env, splice.closureId)
  }
  return closureOfTarget(env, link.entity, link.entityId)
}

function addNote(env: ApplyEnv, args: unknown): ApplyOutcome {
  const input = mutationArgsSchemas.addNote.parse(args)
  const closure = closureOfTarget(env, input.entity, input.entityId)
  assertOpenForActor(env, closure)
  const db = dbOf(env.conn)
  const existing = db.select().from(notes).where(eq(notes.id, input.id)).get()
  if (existing) {
    const same =
      existing.entity === input.entity && existing.entityId === input.entityId && existing.body === input.body
    if (same && existing.authorId === env.actor.id) return applied
    throw refuse('conflict', 'A note with this id already exists.')
  }
  insertNote(env, { ...input, authorId: env.actor.id })
  return applied
}

function insertNote(
  env: ApplyEnv,
  note: { id: string; entity: 'closure' | 'splice'; entityId: string; authorId: string; body: string },
): void {
  dbOf(env.conn)
    .insert(notes)
    .values({ ...note, createdAt: env.at, serverSeq: env.serverSeq })
    .run()
  recordEvent(env.conn, change(env, 'note', note.id), 'created', {
    entity: note.entity,
    entityId: note.entityId,
  })
}

function setClosurePosition(env: ApplyEnv, args: unknown): ApplyOutcome {
  const input = mutationArgsSchemas.setClosurePosition.parse(args)
  const closure = visibleClosure(env, input.closureId)
  assertOpenForActor(env, closure)
  const before = closureRecords.get(env.conn, closure.id)!
  const patch = {
    lat: input.lat,
    lon: input.lon,
    ...(input.routePositionM === undefined ? {} : { routePositionM: input.routePositionM }),
  }
  setClosure(env, before, closure.id, patch)
  return applied
}

function signOffClosure(env: ApplyEnv, args: unknown): ApplyOutcome {
  const input = mutationArgsSchemas.signOffClosure.parse(args)
  const closure = visibleClosure(env, input.closureId)
  assertLeads(env, closure)
  // Two leads signing off the same closure mean the same thing; the first sign-off stands.
  if (closure.state === 'signed_off') return applied
  const before = closureRecords.get(env.conn, closure.id)!
  setClosure(env, before, closure.id, {
    state: 'signed_off',
    signedOffBy: env.actor.id,
    signedOffAt: env.clientTime,
  })
  if (input.note.trim() !== '')
    insertNote(env, {
      id: uuidv7(),
      entity: 'closure',
      entityId: closure.id,
      authorId: env.actor.id,
      body: input.note,
    })
  return applied
}

function reopenClosure(env: ApplyEnv, args: unknown): ApplyOutcome {
  const input = mutationArgsSchemas.reopenClosure.parse(args)
  const closure = visibleClosure(env, input.closureId)
  assertLeads(env, closure)
  if (closure.state === 'reopened') return applied
  if (closure.state !== 'signed_off') throw refuse('conflict', 'Only a signed-off closure can be reopened.')
  const before = closureRecords.get(env.conn, closure.id)!
  setClosure(env, before, closure.id, { state: 'reopened' })
  // The reason is for the crew as much as for the record: it goes on the closure as a note.
  insertNote(env, {
    id: uuidv7(),
    entity: 'closure',
    entityId: closure.id,
    authorId: env.actor.id,
    body: `Reopened: ${input.reason}`,
  })
  return applied
}

// Fields whose change after the foreman looked makes their verdict stale (the review's own fields do not).
const reviewedFields = new Set([
  'trayId',
  'slot',
  'cableAId',
  'fiberA',
  'cableBId',
  'fiberB',
  'method',
  'lossDb',
  'respliceReason',
  'respliceNote',
  'acceptReason',
])

function reviewSplice(env: ApplyEnv, args: unknown): ApplyOutcome {
  const input = mutationArgsSchemas.reviewSplice.parse(args)
  const splice = spliceRow(env.conn, input.id)
  if (!splice || splice.deleted) throw refuse('not_found', 'The splice was not found.')
  const closure = visibleClosure(env, splice.closureId)
  assertLeads(env, closure)
  if (closure.state === 'signed_off')
    throw refuse('closure_locked', 'The closure is signed off; reopen it before reviewing a splice.')
  if (!splice.isCurrent)
    throw refuse('conflict', 'A later attempt replaces this splice; review that one instead.')
  // A verdict on values the foreman never saw would accept something unseen: refuse it, to be looked at again.
  if (splice.serverSeq > env.baseServerSeq) {
    for (const [field, stamp] of spliceFieldStamps(env.conn, splice.id)) {
      if (!reviewedFields.has(field) || stamp.clientId === env.clientId) continue
      if ((stamp.serverSeq ?? splice.serverSeq) > env.baseServerSeq)
        throw refuse('conflict', `The splice changed (${field}) after you looked at it; review it again.`)
    }
  }
  const patch = {
    reviewState: input.verdict,
    reviewReason: input.reason,
    reviewedBy: env.actor.id,
    reviewedAt: env.at,
  }
  if (splice.reviewState === patch.reviewState && splice.reviewReason === patch.reviewReason) return applied
  dbOf(env.conn)
    .update(splices)
    .set({ ...patch, serverSeq: env.serverSeq })
    .where(eq(splices.id, splice.id))
    .run()
  recordFieldChanges(env.conn, change(env, 'splice', splice.id), splice, {
    reviewState: patch.reviewState,
    reviewReason: patch.reviewReason,
  })
  return applied
}

const appliers: Record<MutationName, (env: ApplyEnv, args: unknown) => ApplyOutcome> = {
  createSplice: (env, args) => createSplice(env, args, 'createSplice'),
  resplice: (env, args) => createSplice(env, args, 'resplice'),
  updateSplice,
  deleteSplice,
  addPhotoLink,
  removePhotoLink,
  addNote,
  setClosurePosition,
  signOffClosure,
  reopenClosure,
  reviewSplice,
}

/** Applies one mutation as `env.actor`; throws an AppError with a refusal code when it must be refused. */
export function applyMutation(env: ApplyEnv, name: MutationName, args: unknown): ApplyOutcome {
  return appliers[name](env, args)
}

/** The closure a (possibly malformed) mutation payload is about, for scoping the quarantine; null when unknown. */
export function closureOfPayload(conn: Conn, name: string, args: unknown): string | null {
  const a = (args ?? {}) as Record<string, unknown>
  const str = (value: unknown) => (typeof value === 'string' ? value : null)
  const ofSplice = (id: string | null) =>
    id
      ? (dbOf(conn).select({ c: splices.closureId }).from(splices).where(eq(splices.id, id)).get()?.c ?? null)
      : null
  const ofTarget = (entity: unknown, entityId: string | null): string | null => {
    if (!entityId) return null
    if (entity === 'closure') return entityId
    if (entity === 'splice') return ofSplice(entityId)
    if (entity === 'tray') return trayFacts(conn, entityId)?.closureId ?? null
    return null
  }
  switch (name) {
    case 'createSplice':
    case 'resplice':
    case 'setClosurePosition':
    case 'signOffClosure':
    case 'reopenClosure':
      return str(a.closureId)
    case 'updateSplice':
    case 'deleteSplice':
    case 'reviewSplice':
      return ofSplice(str(a.id))
    case 'addPhotoLink':
    case 'addNote':
      return ofTarget(a.entity, str(a.entityId))
    case 'removePhotoLink': {
      const id = str(a.id)
      const link = id ? dbOf(conn).select().from(photoLinks).where(eq(photoLinks.id, id)).get() : undefined
      return link ? ofTarget(link.entity, link.entityId) : null
    }
    default:
      return null
  }
}

/** The audit entity and id a mutation payload names, for the audit row of its rejection. */
export function auditTargetOf(name: string, args: unknown): { entity: string; entityId: string } | null {
  const a = (args ?? {}) as Record<string, unknown>
  const pick = (entity: string, value: unknown) =>
    typeof value === 'string' && value.length <= 64 ? { entity, entityId: value } : null
  if (['createSplice', 'resplice', 'updateSplice', 'deleteSplice', 'reviewSplice'].includes(name))
    return pick('splice', a.id)
  if (name === 'addPhotoLink' || name === 'removePhotoLink') return pick('photo_link', a.id)
  if (name === 'addNote') return pick('note', a.id)
  return pick('closure', a.closureId)
}
